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
//!   About half the right-hand-side evaluations of 5(4) at rtol 1e-10 on the Lane–Emden
//!   equation (counted: 438 against 877 for n = 1.5, 395 against 937 for n = 3), which is why
//!   the structure solvers use it.
//!
//! Hand-written rather than taken from a crate: of the crates measured when the solver was
//! chosen, `differential-equations` 0.7 had a dense-output bug (ξ1 off by 4e-7) and
//! `ode_solvers` 0.6 reported stiffness at the Lane–Emden centre; these fixed-size,
//! allocation-free loops are accurate and fast.
//!
//! Laid out as the pieces of one method: `tableau` (what a method provides) with one file per
//! method (`dopri5`, `dop853`), `controller` (the step size), `dense` (the continuous
//! extension), `event` (sign change and root) and `driver` (the one loop, generic over the
//! method).
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

mod controller;
mod dense;
mod dop853;
mod dopri5;
mod driver;
mod event;
mod tableau;

use std::fmt;

pub use dense::DenseStep;

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
    /// centres (ξ = 0 of the Lane–Emden equation); the sign is taken from the direction of
    /// x_end.
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
    driver::check_inputs(x0, &y0, x_end, opts)?;
    match opts.method {
        OdeMethod::DormandPrince54 => {
            driver::drive::<dopri5::Dopri5, N, E, F>(rhs, x0, y0, x_end, opts, event)
        }
        OdeMethod::DormandPrince853 => {
            driver::drive::<dop853::Dop853, N, E, F>(rhs, x0, y0, x_end, opts, event)
        }
    }
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
