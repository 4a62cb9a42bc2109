//! The step-size controller shared by both methods.
//!
//! One job: turn the verdict on a trial step into the next step size. An accepted step grows
//! or shrinks h by the method's factor within the method's limits, never growing right after
//! a rejection (Hairer, Nørsett & Wanner, *Solving Ordinary Differential Equations I*, 2nd ed.
//! 1993, §II.4, as in their codes DOPRI5 and DOP853); a rejection by the error estimate
//! shrinks by the same factor, at least by the lower limit; a refused stage or a non-finite
//! value cuts h to a quarter.
//!
//! ```text
//! error 4.0 (5(4)) -> factor 0.9 · 4^(−1/5) = 0.68 -> rejected, h × 0.68
//! error 0.01       -> factor 2.26                   -> accepted, h × 2.26 (× 1 after a rejection)
//! ```

/// The factor applied after a refused stage or a non-finite value (common practice, no
/// source: a step that met a singularity is cut hard, not by an error-based guess).
const REFUSED_SHRINK: f64 = 0.25;

/// Step-size state of one integration: the method's limits and whether the previous attempt
/// was rejected.
pub(super) struct StepController {
    shrink_min: f64,
    grow_max: f64,
    last_reject: bool,
    rejected: usize,
}

impl StepController {
    /// A controller with h_new/h limited to [shrink_min, grow_max].
    pub(super) fn new(shrink_min: f64, grow_max: f64) -> Self {
        Self {
            shrink_min,
            grow_max,
            last_reject: false,
            rejected: 0,
        }
    }

    /// The step after a rejection by the error estimate, which asked for `factor`.
    #[inline(always)]
    pub(super) fn reject_error(&mut self, h: f64, factor: f64) -> f64 {
        self.count_rejection();
        h * factor.max(self.shrink_min)
    }

    /// The step after a refused stage or a non-finite value.
    #[inline(always)]
    pub(super) fn reject_refused(&mut self, h: f64) -> f64 {
        self.count_rejection();
        h * REFUSED_SHRINK
    }

    fn count_rejection(&mut self) {
        self.rejected += 1;
        self.last_reject = true;
    }

    /// The step after an accepted one of size `h` whose error asked for `factor`, signed by
    /// `dir` and capped at `max_step`.
    #[inline(always)]
    pub(super) fn accept(&mut self, h: f64, factor: f64, dir: f64, max_step: f64) -> f64 {
        let mut grow = factor.clamp(self.shrink_min, self.grow_max);
        if self.last_reject {
            grow = grow.min(1.0);
        }
        self.last_reject = false;
        dir * (h.abs() * grow).min(max_step)
    }

    /// Rejected attempts so far.
    pub(super) fn rejected(&self) -> usize {
        self.rejected
    }
}

/// q^(−1/16) for q ≥ 0, from the bit pattern (the exponent field is a piecewise-linear
/// log₂): never below the true value and at most 6.6 % above it; +large for q = 0. Step-size
/// control needs no more, and this is a few integer operations where three square roots
/// (err^(1/8)) and a division sat on the path from one step's error to the next step's stages.
#[inline(always)]
pub(super) fn approx_inv_root16(q: f64) -> f64 {
    const ONE: i64 = 0x3ff0_0000_0000_0000;
    f64::from_bits((ONE + ((ONE - q.to_bits() as i64) >> 4)) as u64)
}

#[cfg(test)]
mod tests {
    use super::*;

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
    fn no_growth_right_after_a_rejection() {
        // Hairer, Nørsett & Wanner §II.4: after a rejection the next step may not grow.
        let mut c = StepController::new(0.2, 10.0);
        let h = c.reject_error(1.0, 0.5);
        assert_eq!(h, 0.5);
        assert_eq!(c.accept(h, 3.0, 1.0, f64::INFINITY), 0.5);
        assert_eq!(c.accept(0.5, 3.0, 1.0, f64::INFINITY), 1.5);
        assert_eq!(c.accept(1.0, 100.0, -1.0, f64::INFINITY), -10.0);
        assert_eq!(c.reject_error(1.0, 0.01), 0.2);
        assert_eq!(c.reject_refused(1.0), 0.25);
        assert_eq!(c.rejected(), 3);
    }
}
