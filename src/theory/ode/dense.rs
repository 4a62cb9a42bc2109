//! The continuous extension of one accepted step.
//!
//! One job: hold and evaluate the interpolant that a method builds for an accepted step, so that
//! events are located and callers read the state anywhere inside the last step. Both methods
//! share one nested form (Hairer, Nørsett & Wanner, *Solving Ordinary Differential Equations I*,
//! 2nd ed. 1993, §II.6 and §II.10; their routines CONTD5 and CONTD8).
//!
//! ```
//! use dwarfbound::theory::ode::{solve, OdeOptions};
//!
//! // y′ = y from 0 to 1; read the last step's interpolant at its middle (closed form eˣ).
//! let sol = solve(
//!     |_x, y: &[f64; 1]| Ok::<_, std::convert::Infallible>([y[0]]),
//!     0.0,
//!     [1.0],
//!     1.0,
//!     &OdeOptions::new(1e-10, 1e-12, 0.1),
//!     None,
//! )
//! .unwrap();
//! let d = sol.last_step.unwrap();
//! let mid = 0.5 * (d.x_start() + d.x_end());
//! assert!((d.eval(mid)[0] - mid.exp()).abs() < 1e-8);
//! ```

/// The continuous extension of one accepted step on [x_old, x_old + h]: fourth-order accurate
/// for Dormand–Prince 5(4), seventh-order for 8(5,3).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DenseStep<const N: usize> {
    pub(super) x_old: f64,
    pub(super) h: f64,
    /// Coefficients of the nested form r0 + s(r1 + s′(r2 + s(r3 + s′(r4 + s(r5 + s′(r6 + s r7))))))
    /// with s = (x − x_old)/h, s′ = 1 − s (Hairer's CONTD5/CONTD8; r5..r7 = 0 for 5(4)).
    pub(super) r: [[f64; N]; 8],
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
