//! Adaptive Dormand–Prince integration (5(4) and 8(5,3)) with dense output and a terminal event.
//!
//! One job: integrate a small, fixed-size first-order system y′ = f(x, y) with error control,
//! and stop exactly where an event function g(x, y) changes sign, the root being located on the
//! continuous extension of the accepted step to near machine precision. Every structure solver
//! of the theory (Lane–Emden, the white-dwarf EOS, the Schönberg–Chandrasekhar envelope) uses it.
//!
//! Two methods, chosen by [`OdeOptions::method`]:
//! * [`OdeMethod::DormandPrince54`] (the default): Dormand & Prince 1980, J. Comput. Appl.
//!   Math. 6, 19, with the dense output of Hairer, Nørsett & Wanner, *Solving Ordinary
//!   Differential Equations I* (2nd ed. 1993), §II.6, as in their code DOPRI5.
//! * [`OdeMethod::DormandPrince853`]: the eighth-order pair with the 5th/3rd-order error
//!   estimate and the seventh-order dense output of Hairer, Nørsett & Wanner (same book, §II.10,
//!   their code DOP853; coefficients of Prince & Dormand 1981, J. Comput. Appl. Math. 7, 67).
//!   About half the right-hand-side evaluations at tolerances near 1e-10, which is why the
//!   Lane–Emden solver uses it.
//!
//! Hand-written rather than taken from a crate: of the crates measured in
//! `../shared/DEPENDENCIES.md`, `differential-equations` 0.7 had a dense-output bug (ξ1 off by
//! 4e-7) and `ode_solvers` 0.6 reported stiffness at the Lane–Emden centre; these fixed-size,
//! allocation-free loops are accurate and fast.
//!
//! The right-hand side returns a `Result`: an `Err` marks a state where the equations have no
//! meaning (a vanishing denominator, say). A failing *trial* stage only rejects the step, which
//! is retried smaller; if the step shrinks to rounding level the error is returned as
//! [`OdeError::Rhs`], so a true singularity becomes a typed error at the place it occurs.
//!
//! ```
//! use dwarfbound::theory::ode::{solve, OdeMethod, OdeOptions, Stop};
//!
//! // y″ = −y from y(0) = 0, y′(0) = 1; stop where y crosses zero: x = π.
//! let mut opts = OdeOptions::new(1e-12, 1e-14, 1e-3);
//! let mut g = |_x: f64, y: &[f64; 2]| y[0];
//! for method in [OdeMethod::DormandPrince54, OdeMethod::DormandPrince853] {
//!     opts.method = method;
//!     let sol = solve(
//!         |_x, y: &[f64; 2]| Ok::<_, std::convert::Infallible>([y[1], -y[0]]),
//!         0.0,
//!         [0.0, 1.0],
//!         10.0,
//!         &opts,
//!         Some(&mut g),
//!     )
//!     .unwrap();
//!     assert_eq!(sol.stop, Stop::Event);
//!     assert!((sol.x - std::f64::consts::PI).abs() < 1e-11);
//! }
//! ```
//!
//! Note that the event function is also evaluated at the start point; a sign change is detected
//! between consecutive accepted points, so the start point itself never triggers (even if g = 0
//! there), and g must not be evaluated on states for which it is undefined.

use std::fmt;

/// Which Runge–Kutta pair integrates.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum OdeMethod {
    /// Dormand–Prince 5(4), 7 stages (6 evaluations per step, first same as last), fourth-order
    /// dense output.
    #[default]
    DormandPrince54,
    /// Dormand–Prince 8(5,3), 12 evaluations per step, seventh-order dense output (3 more
    /// evaluations, made only for the step that ends the integration).
    DormandPrince853,
}

/// Settings of one integration.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OdeOptions<const N: usize> {
    /// Relative tolerance on each component.
    pub rtol: f64,
    /// Absolute tolerance per component (scale these when components differ in size).
    pub atol: [f64; N],
    /// First trial step, |h0| > 0. Explicit, because automatic guesses fail near singular
    /// centres (`structure.md` §4.3 pitfall i); the sign is taken from the direction of x_end.
    pub first_step: f64,
    /// Largest allowed |step| (infinity for none).
    pub max_step: f64,
    /// Largest number of attempted steps before [`OdeError::TooManySteps`].
    pub max_steps: usize,
    /// The Runge–Kutta pair.
    pub method: OdeMethod,
}

impl<const N: usize> OdeOptions<N> {
    /// Options with one absolute tolerance for every component, no step cap, 100 000 steps,
    /// Dormand–Prince 5(4).
    pub fn new(rtol: f64, atol: f64, first_step: f64) -> Self {
        Self {
            rtol,
            atol: [atol; N],
            first_step,
            max_step: f64::INFINITY,
            max_steps: 100_000,
            method: OdeMethod::DormandPrince54,
        }
    }
}

/// A terminal event function g(x, y); the integration stops at its first sign change.
pub type EventFn<'a, const N: usize> = &'a mut dyn FnMut(f64, &[f64; N]) -> f64;

/// Why an integration stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stop {
    /// x reached x_end.
    End,
    /// The event function changed sign; x is its root.
    Event,
}

/// A failed integration. `E` is the right-hand side's own error type.
#[derive(Debug, Clone, PartialEq)]
pub enum OdeError<E> {
    /// The right-hand side refused the state at `x` and no smaller step avoided it.
    Rhs {
        /// Where the failing evaluation was made.
        x: f64,
        /// The right-hand side's reason.
        error: E,
    },
    /// The step fell below rounding level at `x` without an error from the right-hand side
    /// (a non-finite derivative or an error estimate that never came under tolerance).
    StepTooSmall {
        /// Where the integration stalled.
        x: f64,
    },
    /// `max_steps` attempts did not reach x_end or the event.
    TooManySteps {
        /// Where the integration was when it gave up.
        x: f64,
        /// The limit that was hit.
        max_steps: usize,
    },
    /// Options or start values that cannot be used (zero first step, non-finite y0, …).
    InvalidInput(&'static str),
}

impl<E: fmt::Display> fmt::Display for OdeError<E> {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            OdeError::Rhs { x, error } => write!(f, "right-hand side invalid at x = {x}: {error}"),
            OdeError::StepTooSmall { x } => write!(f, "step size underflow at x = {x}"),
            OdeError::TooManySteps { x, max_steps } => {
                write!(f, "no end after {max_steps} steps (stopped at x = {x})")
            }
            OdeError::InvalidInput(why) => write!(f, "invalid integrator input: {why}"),
        }
    }
}

impl<E: fmt::Debug + fmt::Display> std::error::Error for OdeError<E> {}

/// The continuous extension of one accepted step on [x_old, x_old + h]: fourth-order accurate
/// for Dormand–Prince 5(4), seventh-order for 8(5,3).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DenseStep<const N: usize> {
    x_old: f64,
    h: f64,
    /// Coefficients of the nested form r0 + s(r1 + s′(r2 + s(r3 + s′(r4 + s(r5 + s′(r6 + s r7))))))
    /// with s = (x − x_old)/h, s′ = 1 − s (Hairer's CONTD5/CONTD8; r5..r7 = 0 for 5(4)).
    r: [[f64; N]; 8],
}

impl<const N: usize> DenseStep<N> {
    /// Start of the step.
    pub fn x_start(&self) -> f64 {
        self.x_old
    }

    /// End of the step.
    pub fn x_end(&self) -> f64 {
        self.x_old + self.h
    }

    /// The interpolated state at `x` (meant for x inside the step).
    pub fn eval(&self, x: f64) -> [f64; N] {
        let s = (x - self.x_old) / self.h;
        let s1 = 1.0 - s;
        let r = &self.r;
        let mut out = [0.0; N];
        for (i, o) in out.iter_mut().enumerate() {
            let inner = r[4][i] + s * (r[5][i] + s1 * (r[6][i] + s * r[7][i]));
            *o = r[0][i] + s * (r[1][i] + s1 * (r[2][i] + s * (r[3][i] + s1 * inner)));
        }
        out
    }
}

/// Result of [`solve`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OdeSolution<const N: usize> {
    /// Final abscissa: x_end, or the event root.
    pub x: f64,
    /// State at `x` (from the dense output when stopped by the event).
    pub y: [f64; N],
    /// Why the integration stopped.
    pub stop: Stop,
    /// The last accepted step's continuous extension (it contains `x`), if any step was taken.
    pub last_step: Option<DenseStep<N>>,
    /// Accepted steps.
    pub accepted: usize,
    /// Rejected steps.
    pub rejected: usize,
}

// Dormand–Prince 5(4) coefficients (Hairer, Nørsett & Wanner, Table II.5.2; DOPRI5).
const C2: f64 = 1.0 / 5.0;
const C3: f64 = 3.0 / 10.0;
const C4: f64 = 4.0 / 5.0;
const C5: f64 = 8.0 / 9.0;
const A21: f64 = 1.0 / 5.0;
const A31: f64 = 3.0 / 40.0;
const A32: f64 = 9.0 / 40.0;
const A41: f64 = 44.0 / 45.0;
const A42: f64 = -56.0 / 15.0;
const A43: f64 = 32.0 / 9.0;
const A51: f64 = 19372.0 / 6561.0;
const A52: f64 = -25360.0 / 2187.0;
const A53: f64 = 64448.0 / 6561.0;
const A54: f64 = -212.0 / 729.0;
const A61: f64 = 9017.0 / 3168.0;
const A62: f64 = -355.0 / 33.0;
const A63: f64 = 46732.0 / 5247.0;
const A64: f64 = 49.0 / 176.0;
const A65: f64 = -5103.0 / 18656.0;
const A71: f64 = 35.0 / 384.0;
const A73: f64 = 500.0 / 1113.0;
const A74: f64 = 125.0 / 192.0;
const A75: f64 = -2187.0 / 6784.0;
const A76: f64 = 11.0 / 84.0;
const E1: f64 = 71.0 / 57600.0;
const E3: f64 = -71.0 / 16695.0;
const E4: f64 = 71.0 / 1920.0;
const E5: f64 = -17253.0 / 339200.0;
const E6: f64 = 22.0 / 525.0;
const E7: f64 = -1.0 / 40.0;
// Dense output (Hairer's CONTD5 coefficients).
const D1: f64 = -12715105075.0 / 11282082432.0;
const D3: f64 = 87487479700.0 / 32700410799.0;
const D4: f64 = -10690763975.0 / 1880347072.0;
const D5: f64 = 701980252875.0 / 199316789632.0;
const D6: f64 = -1453857185.0 / 822651844.0;
const D7: f64 = 69997945.0 / 29380423.0;

// Explicit loops rather than `std::array::from_fn` in the hot paths: its per-element closure
// was not inlined (measured with perf, ~20 % of a Lane–Emden solve).
#[inline(always)]
fn comb<const N: usize>(y: &[f64; N], h: f64, terms: &[(f64, &[f64; N])]) -> [f64; N] {
    let mut out = [0.0; N];
    for (i, o) in out.iter_mut().enumerate() {
        let mut s = 0.0;
        for (a, k) in terms {
            s += a * k[i];
        }
        *o = y[i] + h * s;
    }
    out
}

/// y + h Σ a_m k_m for a fixed number of stages (unrolled by the compiler). The newest stage
/// goes last and is added on its own, (y + h Σ_older) + (h a_last) k_last, so that only one
/// multiply-add separates it from the next right-hand-side call.
#[inline(always)]
fn stage<const N: usize, const M: usize>(
    y: &[f64; N],
    h: f64,
    a: [f64; M],
    k: [&[f64; N]; M],
) -> [f64; N] {
    let last = M - 1;
    let h_last = h * a[last];
    let mut out = [0.0; N];
    for (i, o) in out.iter_mut().enumerate() {
        let mut base = y[i];
        if last > 0 {
            let mut s = a[0] * k[0][i];
            for m in 1..last {
                s += a[m] * k[m][i];
            }
            base += h * s;
        }
        *o = base + h_last * k[last][i];
    }
    out
}

/// Checks the inputs shared by both methods.
fn check_inputs<const N: usize, E>(
    x0: f64,
    y0: &[f64; N],
    x_end: f64,
    opts: &OdeOptions<N>,
) -> Result<(), OdeError<E>> {
    if !(x0.is_finite() && x_end.is_finite()) {
        return Err(OdeError::InvalidInput("non-finite interval"));
    }
    if y0.iter().any(|v| !v.is_finite()) {
        return Err(OdeError::InvalidInput("non-finite initial state"));
    }
    if !(opts.first_step.is_finite() && opts.first_step != 0.0) {
        return Err(OdeError::InvalidInput(
            "first step must be finite and non-zero",
        ));
    }
    if !(opts.rtol >= 0.0 && opts.atol.iter().all(|a| *a >= 0.0))
        || (opts.rtol == 0.0 && opts.atol.contains(&0.0))
    {
        return Err(OdeError::InvalidInput(
            "tolerances must be non-negative and not all zero",
        ));
    }
    Ok(())
}

/// Integrates y′ = rhs(x, y) from (x0, y0) towards x_end with the method of `opts`, stopping
/// early at the first sign change of `event` between accepted points (root found on the dense
/// output by Brent's method to a few ulps of x). `x_end < x0` integrates backwards.
pub fn solve<const N: usize, E, F>(
    rhs: F,
    x0: f64,
    y0: [f64; N],
    x_end: f64,
    opts: &OdeOptions<N>,
    event: Option<EventFn<'_, N>>,
) -> Result<OdeSolution<N>, OdeError<E>>
where
    F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>,
{
    check_inputs(x0, &y0, x_end, opts)?;
    match opts.method {
        OdeMethod::DormandPrince54 => dopri5(rhs, x0, y0, x_end, opts, event),
        OdeMethod::DormandPrince853 => dop853(rhs, x0, y0, x_end, opts, event),
    }
}

fn dopri5<const N: usize, E, F>(
    mut rhs: F,
    x0: f64,
    y0: [f64; N],
    x_end: f64,
    opts: &OdeOptions<N>,
    mut event: Option<EventFn<'_, N>>,
) -> Result<OdeSolution<N>, OdeError<E>>
where
    F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>,
{
    let dir = if x_end >= x0 { 1.0 } else { -1.0 };
    let max_step = if opts.max_step > 0.0 {
        opts.max_step
    } else {
        f64::INFINITY
    };
    let mut x = x0;
    let mut y = y0;
    let mut k1 = rhs(x, &y).map_err(|error| OdeError::Rhs { x, error })?;
    if k1.iter().any(|v| !v.is_finite()) {
        return Err(OdeError::InvalidInput("non-finite derivative at the start"));
    }
    let mut g_old = match event.as_mut() {
        Some(g) => g(x, &y),
        None => 0.0,
    };
    let mut h = dir * opts.first_step.abs().min(max_step);
    let mut accepted = 0usize;
    let mut rejected = 0usize;
    let mut last_reject = false;
    let mut pending_error: Option<(f64, E)> = None;

    if x == x_end {
        return Ok(OdeSolution {
            x,
            y,
            stop: Stop::End,
            last_step: None,
            accepted,
            rejected,
        });
    }

    for _attempt in 0..opts.max_steps {
        // Clamp to the end point.
        let mut hit_end = false;
        if dir * (x + h - x_end) >= 0.0 {
            h = x_end - x;
            hit_end = true;
        }
        let h_floor = 16.0 * f64::EPSILON * x.abs().max(f64::MIN_POSITIVE.sqrt());
        if h.abs() < h_floor {
            return Err(match pending_error.take() {
                Some((xe, error)) => OdeError::Rhs { x: xe, error },
                None => OdeError::StepTooSmall { x },
            });
        }

        // Stages; any refusal rejects the step.
        let stages = (|| -> Result<_, (f64, E)> {
            let y2 = comb(&y, h, &[(A21, &k1)]);
            let k2 = rhs(x + C2 * h, &y2).map_err(|e| (x + C2 * h, e))?;
            let y3 = comb(&y, h, &[(A31, &k1), (A32, &k2)]);
            let k3 = rhs(x + C3 * h, &y3).map_err(|e| (x + C3 * h, e))?;
            let y4 = comb(&y, h, &[(A41, &k1), (A42, &k2), (A43, &k3)]);
            let k4 = rhs(x + C4 * h, &y4).map_err(|e| (x + C4 * h, e))?;
            let y5 = comb(&y, h, &[(A51, &k1), (A52, &k2), (A53, &k3), (A54, &k4)]);
            let k5 = rhs(x + C5 * h, &y5).map_err(|e| (x + C5 * h, e))?;
            let y6 = comb(
                &y,
                h,
                &[(A61, &k1), (A62, &k2), (A63, &k3), (A64, &k4), (A65, &k5)],
            );
            let x_new = if hit_end { x_end } else { x + h };
            let k6 = rhs(x_new, &y6).map_err(|e| (x_new, e))?;
            let y_new = comb(
                &y,
                h,
                &[(A71, &k1), (A73, &k3), (A74, &k4), (A75, &k5), (A76, &k6)],
            );
            let k7 = rhs(x_new, &y_new).map_err(|e| (x_new, e))?;
            Ok((k3, k4, k5, k6, k7, y_new, x_new))
        })();

        let (k3, k4, k5, k6, k7, y_new, x_new) = match stages {
            Ok(s) => s,
            Err((xe, error)) => {
                pending_error = Some((xe, error));
                rejected += 1;
                last_reject = true;
                h *= 0.25;
                continue;
            }
        };

        // Error estimate (Hairer's RMS norm).
        let mut err2 = 0.0;
        let mut finite = true;
        for i in 0..N {
            let e =
                h * (E1 * k1[i] + E3 * k3[i] + E4 * k4[i] + E5 * k5[i] + E6 * k6[i] + E7 * k7[i]);
            let sk = opts.atol[i] + opts.rtol * y[i].abs().max(y_new[i].abs());
            let r = e / sk;
            err2 += r * r;
            finite &= y_new[i].is_finite() && k7[i].is_finite();
        }
        let err = (err2 / N as f64).sqrt();
        if !finite || !err.is_finite() {
            rejected += 1;
            last_reject = true;
            h *= 0.25;
            continue;
        }
        if err > 1.0 {
            rejected += 1;
            last_reject = true;
            h *= (0.9 * err.powf(-0.2)).max(0.2);
            continue;
        }

        // Accepted. The continuous extension is built only where it is used (event, end).
        pending_error = None;
        accepted += 1;
        let dense = || DenseStep {
            x_old: x,
            h,
            r: [
                y,
                std::array::from_fn(|i| y_new[i] - y[i]),
                std::array::from_fn(|i| h * k1[i] - (y_new[i] - y[i])),
                std::array::from_fn(|i| {
                    let ydiff = y_new[i] - y[i];
                    let bspl = h * k1[i] - ydiff;
                    ydiff - h * k7[i] - bspl
                }),
                std::array::from_fn(|i| {
                    h * (D1 * k1[i]
                        + D3 * k3[i]
                        + D4 * k4[i]
                        + D5 * k5[i]
                        + D6 * k6[i]
                        + D7 * k7[i])
                }),
                [0.0; N],
                [0.0; N],
                [0.0; N],
            ],
        };

        if let Some(g) = event.as_mut() {
            let g_new = g(x_new, &y_new);
            if g_new == 0.0 || (g_old.signum() != g_new.signum() && g_old != 0.0) {
                let dense = dense();
                let (xr, yr) = locate_root(&dense, g, x, g_old, x_new, g_new);
                return Ok(OdeSolution {
                    x: xr,
                    y: yr,
                    stop: Stop::Event,
                    last_step: Some(dense),
                    accepted,
                    rejected,
                });
            }
            g_old = g_new;
        }

        if hit_end {
            return Ok(OdeSolution {
                x: x_new,
                y: y_new,
                stop: Stop::End,
                last_step: Some(dense()),
                accepted,
                rejected,
            });
        }
        x = x_new;
        y = y_new;
        k1 = k7;
        let mut fac = 0.9 * err.max(1e-10).powf(-0.2);
        fac = fac.clamp(0.2, 10.0);
        if last_reject {
            fac = fac.min(1.0);
        }
        last_reject = false;
        h = dir * (h.abs() * fac).min(max_step);
    }
    Err(OdeError::TooManySteps {
        x,
        max_steps: opts.max_steps,
    })
}

/// Coefficients of DOP853, to the digits printed in Hairer's code `dop853.f` (Hairer, Nørsett &
/// Wanner, *Solving ODEs I*, §II.10). Names follow that code: cI nodes, aI_J the Runge–Kutta
/// matrix (stage I from stage J, 1-based; stage 13 is f at the new point, 14–16 serve the
/// dense output), bI the weights (row 13 of a), erI the fifth-order error weights, bhhI the
/// third-order error weights, dR_J the dense-output coefficients.
#[allow(clippy::excessive_precision)]
mod dop853_coefficients {
    pub(super) const C2: f64 = 0.526001519587677318785587544488e-01;
    pub(super) const C3: f64 = 0.789002279381515978178381316732e-01;
    pub(super) const C4: f64 = 0.118350341907227396726757197510;
    pub(super) const C5: f64 = 0.281649658092772603273242802490;
    pub(super) const C6: f64 = 0.333333333333333333333333333333;
    pub(super) const C7: f64 = 0.25;
    pub(super) const C8: f64 = 0.307692307692307692307692307692;
    pub(super) const C9: f64 = 0.651282051282051282051282051282;
    pub(super) const C10: f64 = 0.6;
    pub(super) const C11: f64 = 0.857142857142857142857142857142;
    pub(super) const C14: f64 = 0.1;
    pub(super) const C15: f64 = 0.2;
    pub(super) const C16: f64 = 0.777777777777777777777777777778;
    pub(super) const A2_1: f64 = 5.26001519587677318785587544488e-2;
    pub(super) const A3_1: f64 = 1.97250569845378994544595329183e-2;
    pub(super) const A3_2: f64 = 5.91751709536136983633785987549e-2;
    pub(super) const A4_1: f64 = 2.95875854768068491816892993775e-2;
    pub(super) const A4_3: f64 = 8.87627564304205475450678981324e-2;
    pub(super) const A5_1: f64 = 2.41365134159266685502369798665e-1;
    pub(super) const A5_3: f64 = -8.84549479328286085344864962717e-1;
    pub(super) const A5_4: f64 = 9.24834003261792003115737966543e-1;
    pub(super) const A6_1: f64 = 3.7037037037037037037037037037e-2;
    pub(super) const A6_4: f64 = 1.70828608729473871279604482173e-1;
    pub(super) const A6_5: f64 = 1.25467687566822425016691814123e-1;
    pub(super) const A7_1: f64 = 3.7109375e-2;
    pub(super) const A7_4: f64 = 1.70252211019544039314978060272e-1;
    pub(super) const A7_5: f64 = 6.02165389804559606850219397283e-2;
    pub(super) const A7_6: f64 = -1.7578125e-2;
    pub(super) const A8_1: f64 = 3.70920001185047927108779319836e-2;
    pub(super) const A8_4: f64 = 1.70383925712239993810214054705e-1;
    pub(super) const A8_5: f64 = 1.07262030446373284651809199168e-1;
    pub(super) const A8_6: f64 = -1.53194377486244017527936158236e-2;
    pub(super) const A8_7: f64 = 8.27378916381402288758473766002e-3;
    pub(super) const A9_1: f64 = 6.24110958716075717114429577812e-1;
    pub(super) const A9_4: f64 = -3.36089262944694129406857109825;
    pub(super) const A9_5: f64 = -8.68219346841726006818189891453e-1;
    pub(super) const A9_6: f64 = 2.75920996994467083049415600797e1;
    pub(super) const A9_7: f64 = 2.01540675504778934086186788979e1;
    pub(super) const A9_8: f64 = -4.34898841810699588477366255144e1;
    pub(super) const A10_1: f64 = 4.77662536438264365890433908527e-1;
    pub(super) const A10_4: f64 = -2.48811461997166764192642586468;
    pub(super) const A10_5: f64 = -5.90290826836842996371446475743e-1;
    pub(super) const A10_6: f64 = 2.12300514481811942347288949897e1;
    pub(super) const A10_7: f64 = 1.52792336328824235832596922938e1;
    pub(super) const A10_8: f64 = -3.32882109689848629194453265587e1;
    pub(super) const A10_9: f64 = -2.03312017085086261358222928593e-2;
    pub(super) const A11_1: f64 = -9.3714243008598732571704021658e-1;
    pub(super) const A11_4: f64 = 5.18637242884406370830023853209;
    pub(super) const A11_5: f64 = 1.09143734899672957818500254654;
    pub(super) const A11_6: f64 = -8.14978701074692612513997267357;
    pub(super) const A11_7: f64 = -1.85200656599969598641566180701e1;
    pub(super) const A11_8: f64 = 2.27394870993505042818970056734e1;
    pub(super) const A11_9: f64 = 2.49360555267965238987089396762;
    pub(super) const A11_10: f64 = -3.0467644718982195003823669022;
    pub(super) const A12_1: f64 = 2.27331014751653820792359768449;
    pub(super) const A12_4: f64 = -1.05344954667372501984066689879e1;
    pub(super) const A12_5: f64 = -2.00087205822486249909675718444;
    pub(super) const A12_6: f64 = -1.79589318631187989172765950534e1;
    pub(super) const A12_7: f64 = 2.79488845294199600508499808837e1;
    pub(super) const A12_8: f64 = -2.85899827713502369474065508674;
    pub(super) const A12_9: f64 = -8.87285693353062954433549289258;
    pub(super) const A12_10: f64 = 1.23605671757943030647266201528e1;
    pub(super) const A12_11: f64 = 6.43392746015763530355970484046e-1;
    pub(super) const A13_1: f64 = 5.42937341165687622380535766363e-2;
    pub(super) const A13_6: f64 = 4.45031289275240888144113950566;
    pub(super) const A13_7: f64 = 1.89151789931450038304281599044;
    pub(super) const A13_8: f64 = -5.8012039600105847814672114227;
    pub(super) const A13_9: f64 = 3.1116436695781989440891606237e-1;
    pub(super) const A13_10: f64 = -1.52160949662516078556178806805e-1;
    pub(super) const A13_11: f64 = 2.01365400804030348374776537501e-1;
    pub(super) const A13_12: f64 = 4.47106157277725905176885569043e-2;
    pub(super) const A14_1: f64 = 5.61675022830479523392909219681e-2;
    pub(super) const A14_7: f64 = 2.53500210216624811088794765333e-1;
    pub(super) const A14_8: f64 = -2.46239037470802489917441475441e-1;
    pub(super) const A14_9: f64 = -1.24191423263816360469010140626e-1;
    pub(super) const A14_10: f64 = 1.5329179827876569731206322685e-1;
    pub(super) const A14_11: f64 = 8.20105229563468988491666602057e-3;
    pub(super) const A14_12: f64 = 7.56789766054569976138603589584e-3;
    pub(super) const A14_13: f64 = -8.298e-3;
    pub(super) const A15_1: f64 = 3.18346481635021405060768473261e-2;
    pub(super) const A15_6: f64 = 2.83009096723667755288322961402e-2;
    pub(super) const A15_7: f64 = 5.35419883074385676223797384372e-2;
    pub(super) const A15_8: f64 = -5.49237485713909884646569340306e-2;
    pub(super) const A15_11: f64 = -1.08347328697249322858509316994e-4;
    pub(super) const A15_12: f64 = 3.82571090835658412954920192323e-4;
    pub(super) const A15_13: f64 = -3.40465008687404560802977114492e-4;
    pub(super) const A15_14: f64 = 1.41312443674632500278074618366e-1;
    pub(super) const A16_1: f64 = -4.28896301583791923408573538692e-1;
    pub(super) const A16_6: f64 = -4.69762141536116384314449447206;
    pub(super) const A16_7: f64 = 7.68342119606259904184240953878;
    pub(super) const A16_8: f64 = 4.06898981839711007970213554331;
    pub(super) const A16_9: f64 = 3.56727187455281109270669543021e-1;
    pub(super) const A16_13: f64 = -1.39902416515901462129418009734e-3;
    pub(super) const A16_14: f64 = 2.9475147891527723389556272149;
    pub(super) const A16_15: f64 = -9.15095847217987001081870187138;
    pub(super) const BHH1: f64 = 0.244094488188976377952755905512;
    pub(super) const BHH9: f64 = 0.733846688281611857341361741547;
    pub(super) const BHH12: f64 = 0.220588235294117647058823529412e-1;
    pub(super) const ER1: f64 = 0.1312004499419488073250102996e-1;
    pub(super) const ER6: f64 = -0.1225156446376204440720569753e+1;
    pub(super) const ER7: f64 = -0.4957589496572501915214079952;
    pub(super) const ER8: f64 = 0.1664377182454986536961530415e+1;
    pub(super) const ER9: f64 = -0.3503288487499736816886487290;
    pub(super) const ER10: f64 = 0.3341791187130174790297318841;
    pub(super) const ER11: f64 = 0.8192320648511571246570742613e-1;
    pub(super) const ER12: f64 = -0.2235530786388629525884427845e-1;
    pub(super) const D4_1: f64 = -0.84289382761090128651353491142e+1;
    pub(super) const D4_6: f64 = 0.56671495351937776962531783590;
    pub(super) const D4_7: f64 = -0.30689499459498916912797304727e+1;
    pub(super) const D4_8: f64 = 0.23846676565120698287728149680e+1;
    pub(super) const D4_9: f64 = 0.21170345824450282767155149946e+1;
    pub(super) const D4_10: f64 = -0.87139158377797299206789907490;
    pub(super) const D4_11: f64 = 0.22404374302607882758541771650e+1;
    pub(super) const D4_12: f64 = 0.63157877876946881815570249290;
    pub(super) const D4_13: f64 = -0.88990336451333310820698117400e-1;
    pub(super) const D4_14: f64 = 0.18148505520854727256656404962e+2;
    pub(super) const D4_15: f64 = -0.91946323924783554000451984436e+1;
    pub(super) const D4_16: f64 = -0.44360363875948939664310572000e+1;
    pub(super) const D5_1: f64 = 0.10427508642579134603413151009e+2;
    pub(super) const D5_6: f64 = 0.24228349177525818288430175319e+3;
    pub(super) const D5_7: f64 = 0.16520045171727028198505394887e+3;
    pub(super) const D5_8: f64 = -0.37454675472269020279518312152e+3;
    pub(super) const D5_9: f64 = -0.22113666853125306036270938578e+2;
    pub(super) const D5_10: f64 = 0.77334326684722638389603898808e+1;
    pub(super) const D5_11: f64 = -0.30674084731089398182061213626e+2;
    pub(super) const D5_12: f64 = -0.93321305264302278729567221706e+1;
    pub(super) const D5_13: f64 = 0.15697238121770843886131091075e+2;
    pub(super) const D5_14: f64 = -0.31139403219565177677282850411e+2;
    pub(super) const D5_15: f64 = -0.93529243588444783865713862664e+1;
    pub(super) const D5_16: f64 = 0.35816841486394083752465898540e+2;
    pub(super) const D6_1: f64 = 0.19985053242002433820987653617e+2;
    pub(super) const D6_6: f64 = -0.38703730874935176555105901742e+3;
    pub(super) const D6_7: f64 = -0.18917813819516756882830838328e+3;
    pub(super) const D6_8: f64 = 0.52780815920542364900561016686e+3;
    pub(super) const D6_9: f64 = -0.11573902539959630126141871134e+2;
    pub(super) const D6_10: f64 = 0.68812326946963000169666922661e+1;
    pub(super) const D6_11: f64 = -0.10006050966910838403183860980e+1;
    pub(super) const D6_12: f64 = 0.77771377980534432092869265740;
    pub(super) const D6_13: f64 = -0.27782057523535084065932004339e+1;
    pub(super) const D6_14: f64 = -0.60196695231264120758267380846e+2;
    pub(super) const D6_15: f64 = 0.84320405506677161018159903784e+2;
    pub(super) const D6_16: f64 = 0.11992291136182789328035130030e+2;
    pub(super) const D7_1: f64 = -0.25693933462703749003312586129e+2;
    pub(super) const D7_6: f64 = -0.15418974869023643374053993627e+3;
    pub(super) const D7_7: f64 = -0.23152937917604549567536039109e+3;
    pub(super) const D7_8: f64 = 0.35763911791061412378285349910e+3;
    pub(super) const D7_9: f64 = 0.93405324183624310003907691704e+2;
    pub(super) const D7_10: f64 = -0.37458323136451633156875139351e+2;
    pub(super) const D7_11: f64 = 0.10409964950896230045147246184e+3;
    pub(super) const D7_12: f64 = 0.29840293426660503123344363579e+2;
    pub(super) const D7_13: f64 = -0.43533456590011143754432175058e+2;
    pub(super) const D7_14: f64 = 0.96324553959188282948394950600e+2;
    pub(super) const D7_15: f64 = -0.39177261675615439165231486172e+2;
    pub(super) const D7_16: f64 = -0.14972683625798562581422125276e+3;
}

/// Nodes c1..c12 of DOP853 (c1 = 0; c12 = 1 is the new point).
const DOP853_C: [f64; 12] = {
    use self::dop853_coefficients as dp;
    [
        0.0,
        dp::C2,
        dp::C3,
        dp::C4,
        dp::C5,
        dp::C6,
        dp::C7,
        dp::C8,
        dp::C9,
        dp::C10,
        dp::C11,
        1.0,
    ]
};

/// Rows 1..12 of the DOP853 Runge–Kutta matrix as a dense lower triangle (zeros where the
/// method has none), for the stage loop.
const DOP853_A: [[f64; 12]; 12] = {
    use self::dop853_coefficients as dp;
    let mut a = [[0.0; 12]; 12];
    a[1][0] = dp::A2_1;
    a[2][0] = dp::A3_1;
    a[2][1] = dp::A3_2;
    a[3][0] = dp::A4_1;
    a[3][2] = dp::A4_3;
    a[4][0] = dp::A5_1;
    a[4][2] = dp::A5_3;
    a[4][3] = dp::A5_4;
    a[5][0] = dp::A6_1;
    a[5][3] = dp::A6_4;
    a[5][4] = dp::A6_5;
    a[6][0] = dp::A7_1;
    a[6][3] = dp::A7_4;
    a[6][4] = dp::A7_5;
    a[6][5] = dp::A7_6;
    a[7][0] = dp::A8_1;
    a[7][3] = dp::A8_4;
    a[7][4] = dp::A8_5;
    a[7][5] = dp::A8_6;
    a[7][6] = dp::A8_7;
    a[8][0] = dp::A9_1;
    a[8][3] = dp::A9_4;
    a[8][4] = dp::A9_5;
    a[8][5] = dp::A9_6;
    a[8][6] = dp::A9_7;
    a[8][7] = dp::A9_8;
    a[9][0] = dp::A10_1;
    a[9][3] = dp::A10_4;
    a[9][4] = dp::A10_5;
    a[9][5] = dp::A10_6;
    a[9][6] = dp::A10_7;
    a[9][7] = dp::A10_8;
    a[9][8] = dp::A10_9;
    a[10][0] = dp::A11_1;
    a[10][3] = dp::A11_4;
    a[10][4] = dp::A11_5;
    a[10][5] = dp::A11_6;
    a[10][6] = dp::A11_7;
    a[10][7] = dp::A11_8;
    a[10][8] = dp::A11_9;
    a[10][9] = dp::A11_10;
    a[11][0] = dp::A12_1;
    a[11][3] = dp::A12_4;
    a[11][4] = dp::A12_5;
    a[11][5] = dp::A12_6;
    a[11][6] = dp::A12_7;
    a[11][7] = dp::A12_8;
    a[11][8] = dp::A12_9;
    a[11][9] = dp::A12_10;
    a[11][10] = dp::A12_11;
    a
};

/// The stages of one DOP853 step that the error estimate and the dense output need.
struct Dop853Step<const N: usize> {
    k: [[f64; N]; 12],
    y_new: [f64; N],
    x_new: f64,
}

fn dop853<const N: usize, E, F>(
    mut rhs: F,
    x0: f64,
    y0: [f64; N],
    x_end: f64,
    opts: &OdeOptions<N>,
    mut event: Option<EventFn<'_, N>>,
) -> Result<OdeSolution<N>, OdeError<E>>
where
    F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>,
{
    use self::dop853_coefficients as dp;
    // Step-size control of `dop853.f` with its defaults: h_new/h in [0.333, 6] (its fac1,
    // fac2), no step-size stabilisation (beta = 0), safety 0.9 — here 0.875, because
    // err^(−1/8) is taken from the exponent bits (see `approx_inv_root16`), up to 6.6 % high.
    const SAFE: f64 = 0.875;
    const SHRINK_MIN: f64 = 0.333;
    const GROW_MAX: f64 = 6.0;

    let dir = if x_end >= x0 { 1.0 } else { -1.0 };
    let max_step = if opts.max_step > 0.0 {
        opts.max_step
    } else {
        f64::INFINITY
    };
    let mut x = x0;
    let mut y = y0;
    let mut k1 = rhs(x, &y).map_err(|error| OdeError::Rhs { x, error })?;
    if k1.iter().any(|v| !v.is_finite()) {
        return Err(OdeError::InvalidInput("non-finite derivative at the start"));
    }
    let mut g_old = match event.as_mut() {
        Some(g) => g(x, &y),
        None => 0.0,
    };
    let mut h = dir * opts.first_step.abs().min(max_step);
    let mut accepted = 0usize;
    let mut rejected = 0usize;
    let mut last_reject = false;
    let mut pending_error: Option<(f64, E)> = None;

    if x == x_end {
        return Ok(OdeSolution {
            x,
            y,
            stop: Stop::End,
            last_step: None,
            accepted,
            rejected,
        });
    }

    for _attempt in 0..opts.max_steps {
        let mut hit_end = false;
        if dir * (x + h - x_end) >= 0.0 {
            h = x_end - x;
            hit_end = true;
        }
        let h_floor = 16.0 * f64::EPSILON * x.abs().max(f64::MIN_POSITIVE.sqrt());
        if h.abs() < h_floor {
            return Err(match pending_error.take() {
                Some((xe, error)) => OdeError::Rhs { x: xe, error },
                None => OdeError::StepTooSmall { x },
            });
        }

        // Stages 2–12; any refusal rejects the step. One call site for the right-hand side
        // (a loop over the tableau), so that the compiler inlines it.
        let x_new = if hit_end { x_end } else { x + h };
        let stages = (|| -> Result<Dop853Step<N>, (f64, E)> {
            let mut k = [[0.0; N]; 12];
            k[0] = k1;
            for s in 1..12 {
                let row = &DOP853_A[s];
                let h_last = h * row[s - 1];
                let mut ys = [0.0; N];
                for (i, yi) in ys.iter_mut().enumerate() {
                    let mut acc = 0.0;
                    for j in 0..s - 1 {
                        acc += row[j] * k[j][i];
                    }
                    *yi = (y[i] + h * acc) + h_last * k[s - 1][i];
                }
                let xs = if s == 11 { x_new } else { x + DOP853_C[s] * h };
                k[s] = rhs(xs, &ys).map_err(|e| (xs, e))?;
            }
            let y_new = stage(
                &y,
                h,
                [
                    dp::A13_1,
                    dp::A13_6,
                    dp::A13_7,
                    dp::A13_8,
                    dp::A13_9,
                    dp::A13_10,
                    dp::A13_11,
                    dp::A13_12,
                ],
                [&k[0], &k[5], &k[6], &k[7], &k[8], &k[9], &k[10], &k[11]],
            );
            Ok(Dop853Step { k, y_new, x_new })
        })();
        let step = match stages {
            Ok(s) => s,
            Err((xe, error)) => {
                pending_error = Some((xe, error));
                rejected += 1;
                last_reject = true;
                h *= 0.25;
                continue;
            }
        };
        let k = &step.k;
        let y_new = step.y_new;
        let x_new = step.x_new;

        // Error estimate of dop853.f: the fifth-order estimate, damped by the third-order one
        // where that is small, err = |h| e5² / √(N (e5² + 0.01 e3²)) in scaled RMS norms.
        let mut err5 = 0.0;
        let mut err3 = 0.0;
        let mut finite = true;
        for i in 0..N {
            let sk = opts.atol[i] + opts.rtol * y[i].abs().max(y_new[i].abs());
            let inc = dp::A13_1 * k[0][i]
                + dp::A13_6 * k[5][i]
                + dp::A13_7 * k[6][i]
                + dp::A13_8 * k[7][i]
                + dp::A13_9 * k[8][i]
                + dp::A13_10 * k[9][i]
                + dp::A13_11 * k[10][i]
                + dp::A13_12 * k[11][i];
            let e3 = inc - dp::BHH1 * k[0][i] - dp::BHH9 * k[8][i] - dp::BHH12 * k[11][i];
            let e5 = dp::ER1 * k[0][i]
                + dp::ER6 * k[5][i]
                + dp::ER7 * k[6][i]
                + dp::ER8 * k[7][i]
                + dp::ER9 * k[8][i]
                + dp::ER10 * k[9][i]
                + dp::ER11 * k[10][i]
                + dp::ER12 * k[11][i];
            err5 += (e5 / sk) * (e5 / sk);
            err3 += (e3 / sk) * (e3 / sk);
            finite &= y_new[i].is_finite();
        }
        let mut deno = err5 + 0.01 * err3;
        if deno <= 0.0 {
            deno = 1.0;
        }
        // Hairer's err, squared: no square roots between the stages and the next step size.
        let err_sq = (h * h) * (err5 * err5) / (N as f64 * deno);
        if !finite || !err_sq.is_finite() {
            rejected += 1;
            last_reject = true;
            h *= 0.25;
            continue;
        }
        // SAFE / err^(1/8): the step-size factor of dop853.f before its limits.
        let grow = SAFE * approx_inv_root16(err_sq);
        if err_sq > 1.0 {
            rejected += 1;
            last_reject = true;
            h *= grow.max(SHRINK_MIN);
            continue;
        }

        // f at the new point: the next step's first stage (first same as last).
        let k13 = match rhs(x_new, &y_new) {
            Ok(v) if v.iter().all(|d| d.is_finite()) => v,
            Ok(_) => {
                rejected += 1;
                last_reject = true;
                h *= 0.25;
                continue;
            }
            Err(error) => {
                pending_error = Some((x_new, error));
                rejected += 1;
                last_reject = true;
                h *= 0.25;
                continue;
            }
        };

        let g_new = event.as_mut().map(|g| g(x_new, &y_new));
        let crossed =
            g_new.is_some_and(|gn| gn == 0.0 || (g_old.signum() != gn.signum() && g_old != 0.0));
        let stop = if crossed {
            Some(Stop::Event)
        } else if hit_end {
            Some(Stop::End)
        } else {
            None
        };
        if let Some(stop) = stop {
            // The continuous extension (three more evaluations), only for the final step.
            let dense = match dop853_dense(&mut rhs, x, &y, h, &step, &k13) {
                Ok(d) => d,
                Err((xe, error)) => {
                    pending_error = Some((xe, error));
                    rejected += 1;
                    last_reject = true;
                    h *= 0.25;
                    continue;
                }
            };
            accepted += 1;
            let (xr, yr) = match (stop, event.as_mut(), g_new) {
                (Stop::Event, Some(g), Some(gn)) => locate_root(&dense, g, x, g_old, x_new, gn),
                _ => (x_new, y_new),
            };
            return Ok(OdeSolution {
                x: xr,
                y: yr,
                stop,
                last_step: Some(dense),
                accepted,
                rejected,
            });
        }
        if let Some(gn) = g_new {
            g_old = gn;
        }

        pending_error = None;
        accepted += 1;
        x = x_new;
        y = y_new;
        k1 = k13;
        let mut grow = grow.clamp(SHRINK_MIN, GROW_MAX);
        if last_reject {
            grow = grow.min(1.0);
        }
        last_reject = false;
        h = dir * (h.abs() * grow).min(max_step);
    }
    Err(OdeError::TooManySteps {
        x,
        max_steps: opts.max_steps,
    })
}

/// q^(−1/16) for q ≥ 0, from the bit pattern (the exponent field is a piecewise-linear
/// log₂): never below the true value and at most 6.6 % above it; +large for q = 0. Step-size
/// control needs no more, and this is a few integer operations where three square roots
/// (err^(1/8)) and a division sat on the path from one step's error to the next step's stages.
#[inline(always)]
fn approx_inv_root16(q: f64) -> f64 {
    const ONE: i64 = 0x3ff0_0000_0000_0000;
    f64::from_bits((ONE + ((ONE - q.to_bits() as i64) >> 4)) as u64)
}

/// Hairer's CONTD8 preparation: the seventh-order continuous extension of an accepted DOP853
/// step from its twelve stages, f at the new point (`k13`) and three extra stages.
fn dop853_dense<const N: usize, E, F>(
    rhs: &mut F,
    x: f64,
    y: &[f64; N],
    h: f64,
    step: &Dop853Step<N>,
    k13: &[f64; N],
) -> Result<DenseStep<N>, (f64, E)>
where
    F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>,
{
    use self::dop853_coefficients as dp;
    let k = &step.k;
    let mut f = |c: f64, yy: [f64; N]| {
        let xs = x + c * h;
        rhs(xs, &yy).map_err(|e| (xs, e))
    };
    let k14 = f(
        dp::C14,
        stage(
            y,
            h,
            [
                dp::A14_1,
                dp::A14_7,
                dp::A14_8,
                dp::A14_9,
                dp::A14_10,
                dp::A14_11,
                dp::A14_12,
                dp::A14_13,
            ],
            [&k[0], &k[6], &k[7], &k[8], &k[9], &k[10], &k[11], k13],
        ),
    )?;
    let k15 = f(
        dp::C15,
        stage(
            y,
            h,
            [
                dp::A15_1,
                dp::A15_6,
                dp::A15_7,
                dp::A15_8,
                dp::A15_11,
                dp::A15_12,
                dp::A15_13,
                dp::A15_14,
            ],
            [&k[0], &k[5], &k[6], &k[7], &k[10], &k[11], k13, &k14],
        ),
    )?;
    let k16 = f(
        dp::C16,
        stage(
            y,
            h,
            [
                dp::A16_1,
                dp::A16_6,
                dp::A16_7,
                dp::A16_8,
                dp::A16_9,
                dp::A16_13,
                dp::A16_14,
                dp::A16_15,
            ],
            [&k[0], &k[5], &k[6], &k[7], &k[8], k13, &k14, &k15],
        ),
    )?;
    let ks: [&[f64; N]; 12] = [
        &k[0], &k[5], &k[6], &k[7], &k[8], &k[9], &k[10], &k[11], k13, &k14, &k15, &k16,
    ];
    let d: [[f64; 12]; 4] = [
        [
            dp::D4_1,
            dp::D4_6,
            dp::D4_7,
            dp::D4_8,
            dp::D4_9,
            dp::D4_10,
            dp::D4_11,
            dp::D4_12,
            dp::D4_13,
            dp::D4_14,
            dp::D4_15,
            dp::D4_16,
        ],
        [
            dp::D5_1,
            dp::D5_6,
            dp::D5_7,
            dp::D5_8,
            dp::D5_9,
            dp::D5_10,
            dp::D5_11,
            dp::D5_12,
            dp::D5_13,
            dp::D5_14,
            dp::D5_15,
            dp::D5_16,
        ],
        [
            dp::D6_1,
            dp::D6_6,
            dp::D6_7,
            dp::D6_8,
            dp::D6_9,
            dp::D6_10,
            dp::D6_11,
            dp::D6_12,
            dp::D6_13,
            dp::D6_14,
            dp::D6_15,
            dp::D6_16,
        ],
        [
            dp::D7_1,
            dp::D7_6,
            dp::D7_7,
            dp::D7_8,
            dp::D7_9,
            dp::D7_10,
            dp::D7_11,
            dp::D7_12,
            dp::D7_13,
            dp::D7_14,
            dp::D7_15,
            dp::D7_16,
        ],
    ];
    let y_new = &step.y_new;
    let mut r = [[0.0; N]; 8];
    for i in 0..N {
        let ydiff = y_new[i] - y[i];
        let bspl = h * k[0][i] - ydiff;
        r[0][i] = y[i];
        r[1][i] = ydiff;
        r[2][i] = bspl;
        r[3][i] = ydiff - h * k13[i] - bspl;
        for (row, dr) in d.iter().enumerate() {
            let mut s = 0.0;
            for (dj, kj) in dr.iter().zip(ks.iter()) {
                s += dj * kj[i];
            }
            r[4 + row][i] = h * s;
        }
    }
    Ok(DenseStep { x_old: x, h, r })
}

/// Brent's method for g(dense(x)) = 0 on [a, b] with g(a)·g(b) ≤ 0 (shared with the other
/// root searches in [`super::roots`]); returns the root and the interpolated state there. The
/// interval shrinks to a few ulps of x.
fn locate_root<const N: usize>(
    dense: &DenseStep<N>,
    g: &mut EventFn<'_, N>,
    a0: f64,
    ga0: f64,
    b0: f64,
    gb0: f64,
) -> (f64, [f64; N]) {
    let (x, _) =
        super::roots::brent_root_bracketed(|x| g(x, &dense.eval(x)), a0, ga0, b0, gb0, 2e-300, 200);
    (x, dense.eval(x))
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::convert::Infallible;

    const METHODS: [OdeMethod; 2] = [OdeMethod::DormandPrince54, OdeMethod::DormandPrince853];

    fn options<const N: usize>(
        method: OdeMethod,
        rtol: f64,
        atol: f64,
        first_step: f64,
    ) -> OdeOptions<N> {
        OdeOptions {
            method,
            ..OdeOptions::new(rtol, atol, first_step)
        }
    }

    #[test]
    fn exponential_end_point() {
        // y′ = y, y(0) = 1 → e at x = 1 (closed form).
        for m in METHODS {
            let sol = solve(
                |_x, y: &[f64; 1]| Ok::<_, Infallible>([y[0]]),
                0.0,
                [1.0],
                1.0,
                &options(m, 1e-12, 1e-14, 1e-3),
                None,
            )
            .unwrap();
            assert_eq!(sol.stop, Stop::End);
            assert_eq!(sol.x, 1.0);
            assert!((sol.y[0] - std::f64::consts::E).abs() < 1e-11, "{m:?}");
        }
    }

    #[test]
    fn dense_output_is_accurate_inside_steps() {
        // Closed form sin/cos; the continuous extension is checked mid-step.
        for m in METHODS {
            let sol = solve(
                |_x, y: &[f64; 2]| Ok::<_, Infallible>([y[1], -y[0]]),
                0.0,
                [0.0, 1.0],
                2.0,
                &options(m, 1e-10, 1e-12, 0.1),
                None,
            )
            .unwrap();
            let d = sol.last_step.unwrap();
            assert!(d.x_end() - d.x_start() > 0.0);
            for k in 0..=10 {
                let x = d.x_start() + (d.x_end() - d.x_start()) * k as f64 / 10.0;
                let y = d.eval(x);
                assert!((y[0] - x.sin()).abs() < 1e-8, "{m:?} {x}");
                assert!((y[1] - x.cos()).abs() < 1e-8, "{m:?} {x}");
            }
        }
    }

    #[test]
    fn dop853_dense_output_is_seventh_order() {
        // y′ = y from 0 with one forced step of h: the continuous extension's error at
        // mid-step must fall like h⁸ (a seventh-order interpolant, Hairer, Nørsett & Wanner
        // §II.10); halving h twice gains ≥ 2⁷ each time. Closed form eˣ.
        let mut errs = Vec::new();
        for h in [0.4, 0.2, 0.1] {
            let mut o = options(OdeMethod::DormandPrince853, 1.0, 1.0, h);
            o.max_step = h;
            let sol = solve(
                |_x, y: &[f64; 1]| Ok::<_, Infallible>([y[0]]),
                0.0,
                [1.0],
                h,
                &o,
                None,
            )
            .unwrap();
            assert_eq!(sol.accepted, 1);
            let d = sol.last_step.unwrap();
            let x = 0.37 * h;
            errs.push((d.eval(x)[0] - x.exp()).abs());
        }
        assert!(errs[0] < 1e-9, "{errs:?}");
        assert!(
            errs[0] / errs[1] > 128.0 && errs[1] / errs[2] > 128.0,
            "{errs:?}"
        );
    }

    #[test]
    fn step_size_root_approximation_is_within_its_stated_bounds() {
        // approx_inv_root16(q) / q^(−1/16) ∈ [1, 1.066] (its doc comment), from 1e-300 to 1e300.
        let mut q: f64 = 1e-300;
        while q < 1e300 {
            let r = approx_inv_root16(q) / q.powf(-1.0 / 16.0);
            assert!((1.0 - 1e-12..=1.066).contains(&r), "{q:e}: {r}");
            q *= 1.0137;
        }
        assert!(approx_inv_root16(0.0) > 1e18);
    }

    #[test]
    fn event_backwards() {
        // Integrate y′ = −y backward from x = 0, y = 1; y = e at x = −1 (closed form).
        for m in METHODS {
            let mut g = |_x: f64, y: &[f64; 1]| y[0] - std::f64::consts::E;
            let sol = solve(
                |_x, y: &[f64; 1]| Ok::<_, Infallible>([-y[0]]),
                0.0,
                [1.0],
                -5.0,
                &options(m, 1e-12, 1e-14, 1e-2),
                Some(&mut g),
            )
            .unwrap();
            assert_eq!(sol.stop, Stop::Event);
            assert!((sol.x + 1.0).abs() < 1e-11, "{m:?}");
        }
    }

    #[test]
    fn rhs_error_becomes_typed_error_at_the_singularity() {
        // y′ = 1/(1 − x) refuses x ≥ 1: the integration must stop there with the rhs error.
        for m in METHODS {
            let res = solve(
                |x, _y: &[f64; 1]| {
                    if 1.0 - x <= 1e-9 {
                        Err("pole")
                    } else {
                        Ok([1.0 / (1.0 - x)])
                    }
                },
                0.0,
                [0.0],
                2.0,
                &options(m, 1e-10, 1e-12, 1e-2),
                None,
            );
            match res {
                Err(OdeError::Rhs { x, error }) => {
                    assert_eq!(error, "pole");
                    assert!((x - 1.0).abs() < 1e-3, "{m:?} {x}");
                }
                other => panic!("{m:?} {other:?}"),
            }
        }
    }

    #[test]
    fn trial_stage_refusal_is_only_a_rejection() {
        // y′ = y², y(0) = 1, exact 1/(1 − x) (closed form). The rhs refuses states more than
        // 1e-3 off the exact curve, which only the trial stages of a too-big first step reach.
        for m in METHODS {
            let sol = solve(
                |x, y: &[f64; 1]| {
                    if (y[0] - 1.0 / (1.0 - x)).abs() > 1e-3 {
                        Err("off the curve")
                    } else {
                        Ok([y[0] * y[0]])
                    }
                },
                0.0,
                [1.0],
                0.5,
                &options(m, 1e-12, 1e-14, 0.5),
                None,
            )
            .unwrap();
            assert!((sol.y[0] - 2.0).abs() < 1e-11, "{m:?}");
            assert!(sol.rejected > 0);
        }
    }

    #[test]
    fn lane_emden_n1_surface_to_near_machine_precision() {
        // θ = sin ξ/ξ, first zero π, ω = π (closed form, common practice, no source).
        for m in METHODS {
            let x0: f64 = 1e-4;
            let y0 = [
                1.0 - x0 * x0 / 6.0 + x0.powi(4) / 120.0,
                x0.powi(3) / 3.0 - x0.powi(5) / 30.0,
            ];
            let mut g = |_x: f64, y: &[f64; 2]| y[0];
            let sol = solve(
                |x, y: &[f64; 2]| Ok::<_, Infallible>([-y[1] / (x * x), x * x * y[0]]),
                x0,
                y0,
                100.0,
                &options(m, 1e-12, 1e-14, 1e-4),
                Some(&mut g),
            )
            .unwrap();
            assert_eq!(sol.stop, Stop::Event);
            let pi = std::f64::consts::PI;
            assert!((sol.x - pi).abs() < 1e-11, "{m:?} {}", sol.x);
            assert!((sol.y[1] - pi).abs() < 1e-11, "{m:?} {}", sol.y[1]);
        }
    }

    #[test]
    fn invalid_inputs_are_refused() {
        for m in METHODS {
            let r = solve(
                |_x, y: &[f64; 1]| Ok::<_, Infallible>([y[0]]),
                0.0,
                [1.0],
                1.0,
                &options(m, 1e-10, 1e-12, 0.0),
                None,
            );
            assert!(matches!(r, Err(OdeError::InvalidInput(_))));
        }
    }
}
