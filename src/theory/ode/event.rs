//! Terminal-event detection and location.
//!
//! One job: decide whether the event function changed sign over an accepted step, and if so
//! find its root on the step's continuous extension by Brent's method (shared with the other
//! root searches in [`crate::theory::roots`]), to a few ulps of x.
//!
//! ```text
//! g(x_old) = −0.3, g(x_new) = +0.1  -> crossed; root by Brent on g(dense(x))
//! g(x_old) =  0.0, g(x_new) = +0.1  -> not crossed (a start on the root never triggers)
//! ```

use super::dense::DenseStep;
use super::EventFn;

/// Whether g changed sign between consecutive accepted points: g_new = 0 counts, a zero at the
/// older point does not (so the start point itself never triggers).
#[inline(always)]
pub(super) fn crossed(g_old: f64, g_new: f64) -> bool {
    g_new == 0.0 || (g_old.signum() != g_new.signum() && g_old != 0.0)
}

/// Brent's method for g(dense(x)) = 0 on [a, b] with g(a)·g(b) ≤ 0; returns the root and the
/// interpolated state there. The interval shrinks to a few ulps of x.
pub(super) fn locate_root<const N: usize>(
    dense: &DenseStep<N>,
    g: &mut EventFn<'_, N>,
    a0: f64,
    ga0: f64,
    b0: f64,
    gb0: f64,
) -> (f64, [f64; N]) {
    let (x, _) = crate::theory::roots::brent_root_bracketed(
        |x| g(x, &dense.eval(x)),
        a0,
        ga0,
        b0,
        gb0,
        2e-300,
        200,
    );
    (x, dense.eval(x))
}

#[cfg(test)]
mod tests {
    use super::crossed;

    #[test]
    fn sign_change_rules() {
        // The rules stated in the module doc of `ode` (common practice, no source).
        assert!(crossed(-0.3, 0.1));
        assert!(crossed(0.3, -0.1));
        assert!(crossed(0.3, 0.0));
        assert!(!crossed(0.0, 0.1));
        assert!(!crossed(0.2, 0.1));
    }
}
