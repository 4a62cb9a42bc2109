//! The Dormand–Prince 5(4) tableau.
//!
//! One job: the stages, error estimate, step-size exponent and fourth-order dense output of
//! the pair of Dormand & Prince 1980 (J. Comput. Appl. Math. 6, 19), with the coefficients
//! and continuous extension of Hairer, Nørsett & Wanner, *Solving Ordinary Differential
//! Equations I* (2nd ed. 1993), Table II.5.2 and §II.6, as in their code DOPRI5. Seven stages,
//! six evaluations per step (the seventh, f at the new point, is the next step's first).
//!
//! ```
//! use dwarfbound::theory::ode::{solve, OdeMethod, OdeOptions};
//!
//! // y′ = y, y(0) = 1 → e at x = 1 (closed form).
//! let mut opts = OdeOptions::new(1e-12, 1e-14, 1e-3);
//! opts.method = OdeMethod::DormandPrince54;
//! let sol = solve(|_x, y: &[f64; 1]| Ok::<_, ()>([y[0]]), 0.0, [1.0], 1.0, &opts, None).unwrap();
//! assert!((sol.y[0] - std::f64::consts::E).abs() < 1e-11);
//! ```

use super::dense::DenseStep;
use super::tableau::{comb, Refusal, Tableau};
use super::OdeOptions;

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

/// Dormand–Prince 5(4) (DOPRI5).
pub(super) struct Dopri5;

/// The stages of one trial step that the error estimate and dense output need (k2 is used by
/// neither); k7 is f at the new point.
pub(super) struct Dopri5Stages<const N: usize> {
    k3: [f64; N],
    k4: [f64; N],
    k5: [f64; N],
    k6: [f64; N],
    k7: [f64; N],
    y_new: [f64; N],
}

impl<const N: usize> Tableau<N> for Dopri5 {
    type Stages = Dopri5Stages<N>;

    // DOPRI5's defaults: h_new/h in [0.2, 10].
    const SHRINK_MIN: f64 = 0.2;
    const GROW_MAX: f64 = 10.0;

    #[inline(always)]
    fn stages<E, F>(
        rhs: &mut F,
        x: f64,
        y: &[f64; N],
        k1: &[f64; N],
        h: f64,
        x_new: f64,
    ) -> Result<Self::Stages, (f64, E)>
    where
        F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>,
    {
        let y2 = comb(y, h, &[(A21, k1)]);
        let k2 = rhs(x + C2 * h, &y2).map_err(|e| (x + C2 * h, e))?;
        let y3 = comb(y, h, &[(A31, k1), (A32, &k2)]);
        let k3 = rhs(x + C3 * h, &y3).map_err(|e| (x + C3 * h, e))?;
        let y4 = comb(y, h, &[(A41, k1), (A42, &k2), (A43, &k3)]);
        let k4 = rhs(x + C4 * h, &y4).map_err(|e| (x + C4 * h, e))?;
        let y5 = comb(y, h, &[(A51, k1), (A52, &k2), (A53, &k3), (A54, &k4)]);
        let k5 = rhs(x + C5 * h, &y5).map_err(|e| (x + C5 * h, e))?;
        let y6 = comb(
            y,
            h,
            &[(A61, k1), (A62, &k2), (A63, &k3), (A64, &k4), (A65, &k5)],
        );
        let k6 = rhs(x_new, &y6).map_err(|e| (x_new, e))?;
        let y_new = comb(
            y,
            h,
            &[(A71, k1), (A73, &k3), (A74, &k4), (A75, &k5), (A76, &k6)],
        );
        // First same as last: f at the new point enters the error estimate.
        let k7 = rhs(x_new, &y_new).map_err(|e| (x_new, e))?;
        Ok(Dopri5Stages {
            k3,
            k4,
            k5,
            k6,
            k7,
            y_new,
        })
    }

    #[inline(always)]
    fn y_new(stages: &Self::Stages) -> &[f64; N] {
        &stages.y_new
    }

    /// Hairer's RMS norm of the 5(4) difference.
    #[inline(always)]
    fn error_measure(
        st: &Self::Stages,
        y: &[f64; N],
        k1: &[f64; N],
        h: f64,
        opts: &OdeOptions<N>,
    ) -> Option<f64> {
        let mut err2 = 0.0;
        let mut finite = true;
        for i in 0..N {
            let e = h
                * (E1 * k1[i]
                    + E3 * st.k3[i]
                    + E4 * st.k4[i]
                    + E5 * st.k5[i]
                    + E6 * st.k6[i]
                    + E7 * st.k7[i]);
            let sk = opts.atol[i] + opts.rtol * y[i].abs().max(st.y_new[i].abs());
            let r = e / sk;
            err2 += r * r;
            finite &= st.y_new[i].is_finite() && st.k7[i].is_finite();
        }
        let err = (err2 / N as f64).sqrt();
        (finite && err.is_finite()).then_some(err)
    }

    /// 0.9 err^(−1/5), DOPRI5's factor with its safety 0.9 (err floored at 1e-10).
    #[inline(always)]
    fn step_factor(err: f64) -> f64 {
        0.9 * err.max(1e-10).powf(-0.2)
    }

    /// Already computed with the stages (its finiteness is part of the error measure).
    #[inline(always)]
    fn f_new<E, F>(_rhs: &mut F, stages: &Self::Stages, _x_new: f64) -> Result<[f64; N], Refusal<E>>
    where
        F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>,
    {
        Ok(stages.k7)
    }

    /// Hairer's CONTD5 preparation: no further evaluations.
    fn dense<E, F>(
        _rhs: &mut F,
        x: f64,
        y: &[f64; N],
        k1: &[f64; N],
        h: f64,
        st: &Self::Stages,
        _f_new: &[f64; N],
    ) -> Result<DenseStep<N>, (f64, E)>
    where
        F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>,
    {
        let y_new = &st.y_new;
        Ok(DenseStep {
            x_old: x,
            h,
            r: [
                *y,
                std::array::from_fn(|i| y_new[i] - y[i]),
                std::array::from_fn(|i| h * k1[i] - (y_new[i] - y[i])),
                std::array::from_fn(|i| {
                    let ydiff = y_new[i] - y[i];
                    let bspl = h * k1[i] - ydiff;
                    ydiff - h * st.k7[i] - bspl
                }),
                std::array::from_fn(|i| {
                    h * (D1 * k1[i]
                        + D3 * st.k3[i]
                        + D4 * st.k4[i]
                        + D5 * st.k5[i]
                        + D6 * st.k6[i]
                        + D7 * st.k7[i])
                }),
                [0.0; N],
                [0.0; N],
                [0.0; N],
            ],
        })
    }
}
