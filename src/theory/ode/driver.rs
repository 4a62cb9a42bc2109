//! The driving loop, generic over the method.
//!
//! One job: advance an integration step by step with any [`Tableau`]: clamp the step to the
//! end point, try it, reject it (a refused stage, a non-finite value, an error estimate over
//! tolerance) or accept it, watch the event function, and stop at the event or the end with
//! the step's continuous extension. Monomorphised per method, so the tableau's stages inline
//! into the loop as if written there.
//!
//! ```text
//! loop: clamp h -> stages -> error ≤ 1? -> f_new -> event crossed / end reached? -> dense, stop
//!                  └ refused: h/4   └ no: h × factor   └ refused: h/4
//! ```

use super::controller::StepController;
use super::event::{crossed, locate_root};
use super::tableau::{Refusal, Tableau};
use super::{EventFn, OdeError, OdeOptions, OdeSolution, Stop};

/// Why a trial step was rejected.
enum Rejection<E> {
    /// The error estimate was over tolerance and asked for this factor.
    TooLarge(f64),
    /// A stage was refused (with the right-hand side's error, if it gave one) or a value was
    /// not finite.
    Refused(Option<(f64, E)>),
}

impl<E> From<(f64, E)> for Rejection<E> {
    fn from(refusal: (f64, E)) -> Self {
        Rejection::Refused(Some(refusal))
    }
}

impl<E> From<Refusal<E>> for Rejection<E> {
    fn from(refusal: Refusal<E>) -> Self {
        match refusal {
            Refusal::Rhs(x, error) => Rejection::Refused(Some((x, error))),
            Refusal::NonFinite => Rejection::Refused(None),
        }
    }
}

/// An accepted step that does not end the integration.
struct Advance<const N: usize> {
    y_new: [f64; N],
    f_new: [f64; N],
    factor: f64,
    g_new: Option<f64>,
}

/// What an accepted step did.
enum Accepted<const N: usize> {
    /// The integration goes on from the new point.
    Advance(Advance<N>),
    /// The integration ends here.
    Stop(OdeSolution<N>),
}

/// Checks the inputs shared by both methods.
pub(super) fn check_inputs<const N: usize, E>(
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

/// Integrates with method `T` (inputs already checked by [`check_inputs`]); see
/// [`super::solve`].
pub(super) fn drive<T, const N: usize, E, F>(
    mut rhs: F,
    x0: f64,
    y0: [f64; N],
    x_end: f64,
    opts: &OdeOptions<N>,
    mut event: Option<EventFn<'_, N>>,
) -> Result<OdeSolution<N>, OdeError<E>>
where
    T: Tableau<N>,
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
    let mut control = StepController::new(T::SHRINK_MIN, T::GROW_MAX);
    let mut accepted = 0usize;
    let mut pending_error: Option<(f64, E)> = None;

    if x == x_end {
        return Ok(OdeSolution {
            x,
            y,
            stop: Stop::End,
            last_step: None,
            accepted,
            rejected: 0,
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
        let x_new = if hit_end { x_end } else { x + h };

        let step = try_step::<T, N, E, F>(
            &mut rhs,
            Trial {
                x,
                y: &y,
                k1: &k1,
                h,
                x_new,
                hit_end,
            },
            opts,
            &mut event,
            g_old,
        );
        match step {
            Err(Rejection::TooLarge(factor)) => h = control.reject_error(h, factor),
            Err(Rejection::Refused(error)) => {
                if error.is_some() {
                    pending_error = error;
                }
                h = control.reject_refused(h);
            }
            Ok(Accepted::Stop(mut solution)) => {
                solution.accepted = accepted + 1;
                solution.rejected = control.rejected();
                return Ok(solution);
            }
            Ok(Accepted::Advance(advance)) => {
                if let Some(gn) = advance.g_new {
                    g_old = gn;
                }
                pending_error = None;
                accepted += 1;
                x = x_new;
                y = advance.y_new;
                k1 = advance.f_new;
                h = control.accept(h, advance.factor, dir, max_step);
            }
        }
    }
    Err(OdeError::TooManySteps {
        x,
        max_steps: opts.max_steps,
    })
}

/// Where a trial step starts and ends.
struct Trial<'a, const N: usize> {
    x: f64,
    y: &'a [f64; N],
    k1: &'a [f64; N],
    h: f64,
    x_new: f64,
    hit_end: bool,
}

/// One trial step: accepted (going on or stopping at the event or the end) or rejected.
#[inline(always)]
fn try_step<T, const N: usize, E, F>(
    rhs: &mut F,
    t: Trial<'_, N>,
    opts: &OdeOptions<N>,
    event: &mut Option<EventFn<'_, N>>,
    g_old: f64,
) -> Result<Accepted<N>, Rejection<E>>
where
    T: Tableau<N>,
    F: FnMut(f64, &[f64; N]) -> Result<[f64; N], E>,
{
    let Trial {
        x,
        y,
        k1,
        h,
        x_new,
        hit_end,
    } = t;
    let stages = T::stages(rhs, x, y, k1, h, x_new)?;
    let err = T::error_measure(&stages, y, k1, h, opts).ok_or(Rejection::Refused(None))?;
    let factor = T::step_factor(err);
    if err > 1.0 {
        return Err(Rejection::TooLarge(factor));
    }
    let f_new = T::f_new(rhs, &stages, x_new)?;
    let y_new = *T::y_new(&stages);

    let g_new = event.as_mut().map(|g| g(x_new, &y_new));
    let stop = if g_new.is_some_and(|gn| crossed(g_old, gn)) {
        Stop::Event
    } else if hit_end {
        Stop::End
    } else {
        return Ok(Accepted::Advance(Advance {
            y_new,
            f_new,
            factor,
            g_new,
        }));
    };
    // The continuous extension, only for the step that ends the integration.
    let dense = T::dense(rhs, x, y, k1, h, &stages, &f_new)?;
    let (x_stop, y_stop) = match (stop, event.as_mut(), g_new) {
        (Stop::Event, Some(g), Some(gn)) => locate_root(&dense, g, x, g_old, x_new, gn),
        _ => (x_new, y_new),
    };
    Ok(Accepted::Stop(OdeSolution {
        x: x_stop,
        y: y_stop,
        stop,
        last_step: Some(dense),
        accepted: 0,
        rejected: 0,
    }))
}
