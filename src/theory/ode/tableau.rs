//! What the driving loop needs from one embedded Runge–Kutta pair.
//!
//! One job: the interface between [`super::driver`] and a method. A method computes the stages
//! of a trial step, measures their error, supplies f at the new point (first same as last) and
//! builds the continuous extension; the loop does everything else (step-size control, events,
//! end point, bookkeeping) once for every method. Also the stage combinations y + h Σ a_j k_j
//! that both tableaus use.
//!
//! ```text
//! stages(x, y, k1, h) -> error_measure -> f_new -> (at an event or the end) dense
//! ```

use super::dense::DenseStep;
use super::OdeOptions;

/// Why a stage could not be used.
pub(super) enum Refusal<E> {
    /// The right-hand side refused the state at this x (kept: it becomes the error if the step
    /// shrinks to nothing).
    Rhs(f64, E),
    /// The right-hand side returned a non-finite derivative.
    NonFinite,
}

impl<E> From<(f64, E)> for Refusal<E> {
    fn from((x, error): (f64, E)) -> Self {
        Refusal::Rhs(x, error)
    }
}

/// One embedded Runge–Kutta pair with its error estimate, step-size exponent and dense output.
/// Implemented by [`super::dopri5::Dopri5`] and [`super::dop853::Dop853`].
pub(super) trait Tableau<const N: usize> {
    /// The stages of one trial step (whatever the error estimate and dense output need).
    type Stages;

    /// Smallest factor h_new/h (the step-size controller's lower limit).
    const SHRINK_MIN: f64;
    /// Largest factor h_new/h after an accepted step.
    const GROW_MAX: f64;

    /// The stages of a step of size `h` from (x, y), with k1 = f(x, y) and the end abscissa
    /// `x_new` (exactly x_end on the last step). A refusal names where it happened.
    fn stages<E, F>(
        rhs: &mut F,
        x: f64,
        y: &[f64; N],
        k1: &[f64; N],
        h: f64,
        x_new: f64,
    ) -> Result<Self::Stages, (f64, E)>
    where
        F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>;

    /// The state at the end of the trial step.
    fn y_new(stages: &Self::Stages) -> &[f64; N];

    /// The scaled error of the trial step, in the method's own measure (≤ 1 accepts); `None`
    /// when anything in it is not finite.
    fn error_measure(
        stages: &Self::Stages,
        y: &[f64; N],
        k1: &[f64; N],
        h: f64,
        opts: &OdeOptions<N>,
    ) -> Option<f64>;

    /// The step-size factor h_new/h that the error measure asks for, before the controller's
    /// limits.
    fn step_factor(error_measure: f64) -> f64;

    /// f at the new point, the next step's first stage.
    fn f_new<E, F>(rhs: &mut F, stages: &Self::Stages, x_new: f64) -> Result<[f64; N], Refusal<E>>
    where
        F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>;

    /// The continuous extension of the accepted step (built only where it is used: at an event
    /// or the end point).
    fn dense<E, F>(
        rhs: &mut F,
        x: f64,
        y: &[f64; N],
        k1: &[f64; N],
        h: f64,
        stages: &Self::Stages,
        f_new: &[f64; N],
    ) -> Result<DenseStep<N>, (f64, E)>
    where
        F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>;
}

// Explicit loops rather than `std::array::from_fn` in the hot paths: its per-element closure
// was not inlined (measured with perf, ~20 % of a Lane–Emden solve).

/// y + h Σ a_m k_m over a slice of terms, summed in order.
#[inline(always)]
pub(super) fn comb<const N: usize>(y: &[f64; N], h: f64, terms: &[(f64, &[f64; N])]) -> [f64; N] {
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
pub(super) fn stage<const N: usize, const M: usize>(
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
