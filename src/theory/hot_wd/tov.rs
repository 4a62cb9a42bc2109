//! The general-relativistic correction to white-dwarf radii at standard gravity, tabulated once
//! per core.
//!
//! One job: R_TOV(M)/R_Newton(M) of the cold Salpeter model (the same matter in the
//! Tolman–Oppenheimer–Volkoff and in the Newtonian equation, [`super::cold::ColdWd`]) and the TOV
//! maximum mass, for multiplying the Newtonian standard-gravity radius R_std(M, Teff, core, layer)
//! at the high-mass end. The modified theory keeps entering as the Newtonian-order ratio
//! R_c(M; ϒ, τ)/R_c(M; 0, 0); this correction is at ϒ = τ = 0 only. Applying the cold ratio to
//! a hot star is an assumption: the correction is set by the compactness of the degenerate core,
//! which holds almost all the mass (GM/(Rc²) = 2.6e-4 at 1 M☉), and temperature and envelope
//! change that little.
//!
//! Cost: each sequence (Newtonian and TOV) is one integration per central value, 128 + 128 of
//! them plus the maximum (≈ 0.05 s per core, measured: 0.32 s for all five cores and one direct
//! maximum), done at first use and cached for the process; a lookup is a 6-point Lagrange
//! interpolation of ln R in ln M on both sequences. Checked against direct root-found solves
//! ([`super::cold::tov_radius_ratio`]) in the tests.
//!
//! ```
//! use dwarfbound::theory::hot_wd::{tov::tov_correction, Core};
//!
//! let tov = tov_correction(Core::CarbonOxygen).unwrap();
//! let r = tov.ratio(0.6).unwrap();
//! assert!(r < 1.0 && r > 0.999);
//! assert!(tov.ratio(tov.maximum_mass_msun() + 0.01).is_none());
//! ```

use std::sync::OnceLock;

use rayon::prelude::*;

use crate::theory::hot_wd::cold::{tov_radius_ratio, ColdModel, ColdWd};
use crate::theory::hot_wd::{Core, Electrostatics, HotWdError};

/// Central values per sequence (log-spaced in u_c).
const SEQUENCE_POINTS: usize = 128;

/// The last this many TOV nodes below the maximum are left out of the interpolation (there
/// dR/dM → ∞); masses above the last kept node are solved directly.
const DIRECT_NEAR_MAXIMUM: usize = 4;

/// A sequence of models as (ln M, ln R) pairs, increasing in M.
pub type Sequence = [(f64, f64)];

/// The correction for one core.
#[derive(Debug, Clone, PartialEq)]
pub struct TovCorrection {
    core: Core,
    maximum_mass_msun: f64,
    /// (ln M, ln R) of the TOV sequence, increasing in M, up to a few nodes below the maximum.
    relativistic: Vec<(f64, f64)>,
    /// (ln M, ln R) of the Newtonian sequence, increasing in M, beyond the TOV maximum.
    newtonian: Vec<(f64, f64)>,
}

/// Points of the Lagrange stencil (6: the error at 128 nodes was 2.5e-6 with 4 points).
const STENCIL: usize = 6;

/// [`STENCIL`]-point Lagrange interpolation of y(x) on nodes increasing in x (stencil shifted
/// inwards at the ends); `None` outside [x₀, x_last].
fn lagrange(nodes: &[(f64, f64)], x: f64) -> Option<f64> {
    let n = nodes.len();
    if n < STENCIL || x < nodes[0].0 || x > nodes[n - 1].0 {
        return None;
    }
    let j = nodes.partition_point(|p| p.0 <= x);
    let start = j.saturating_sub(STENCIL / 2).min(n - STENCIL);
    let s = &nodes[start..start + STENCIL];
    let mut y = 0.0;
    for (i, (xi, yi)) in s.iter().enumerate() {
        let mut w = 1.0;
        for (k, (xk, _)) in s.iter().enumerate() {
            if k != i {
                w *= (x - xk) / (xi - xk);
            }
        }
        y += w * yi;
    }
    Some(y)
}

/// The models at `n` log-spaced central values, solved in parallel (each is independent) and
/// kept in order; the first failure in that order is the error, as in a serial loop.
fn sequence(wd: &ColdWd, ln_lo: f64, ln_hi: f64, n: usize) -> Result<Vec<(f64, f64)>, HotWdError> {
    let models: Vec<Result<(f64, f64), HotWdError>> = (0..n)
        .into_par_iter()
        .map(|k| {
            let lnu = ln_lo + (ln_hi - ln_lo) * k as f64 / (n - 1) as f64;
            let ColdModel {
                mass_msun,
                radius_rsun,
                ..
            } = wd.model(lnu.exp())?;
            Ok((mass_msun.ln(), radius_rsun.ln()))
        })
        .collect();
    models.into_iter().collect()
}

impl TovCorrection {
    /// Computes both sequences of `core` (use [`tov_correction`] for the cached one).
    pub fn compute(core: Core) -> Result<Self, HotWdError> {
        let comp = core.composition();
        let gr = ColdWd::relativistic(&comp, Electrostatics::default())?;
        let newton = ColdWd::new(&comp, 0.0, Electrostatics::default())?;
        // The lightest central value that `model_of_mass` also uses (≈ 0.01–0.05 M☉).
        let ln_lo = (1e-3f64).max(3.0 * gr.surface_u()).ln();
        // The Newtonian sequence does not wait for the relativistic maximum.
        let (relativistic, newtonian) = rayon::join(
            || -> Result<_, HotWdError> {
                let top = gr.maximum_mass()?;
                let mut relativistic = sequence(&gr, ln_lo, top.u_c.ln(), SEQUENCE_POINTS)?;
                // Keep the strictly increasing part (the last node is the maximum itself).
                relativistic.dedup_by(|b, a| b.0 <= a.0);
                relativistic.truncate(relativistic.len().saturating_sub(DIRECT_NEAR_MAXIMUM));
                Ok((top, relativistic))
            },
            || sequence(&newton, ln_lo, 1e4f64.ln(), SEQUENCE_POINTS),
        );
        let (top, relativistic) = relativistic?;
        let newtonian = newtonian?;
        Ok(Self {
            core,
            maximum_mass_msun: top.mass_msun,
            relativistic,
            newtonian,
        })
    }

    /// The tabulated parts: (core, TOV maximum mass in M☉, (ln M, ln R) of the TOV sequence,
    /// (ln M, ln R) of the Newtonian sequence). With [`TovCorrection::from_parts`], lets a
    /// caller keep a computed correction between runs (the theory does no file IO itself).
    pub fn parts(&self) -> (Core, f64, &Sequence, &Sequence) {
        (
            self.core,
            self.maximum_mass_msun,
            &self.relativistic,
            &self.newtonian,
        )
    }

    /// A correction from parts kept by a caller (see [`TovCorrection::parts`]); `None` unless
    /// they have the shape [`TovCorrection::compute`] gives: a finite positive maximum mass, and
    /// each sequence finite, strictly increasing in ln M and long enough to interpolate.
    pub fn from_parts(
        core: Core,
        maximum_mass_msun: f64,
        relativistic: Vec<(f64, f64)>,
        newtonian: Vec<(f64, f64)>,
    ) -> Option<Self> {
        let good = |s: &[(f64, f64)]| {
            s.len() >= STENCIL
                && s.iter().all(|p| p.0.is_finite() && p.1.is_finite())
                && s.windows(2).all(|w| w[1].0 > w[0].0)
        };
        (maximum_mass_msun.is_finite()
            && maximum_mass_msun > 0.0
            && good(&relativistic)
            && good(&newtonian))
        .then_some(Self {
            core,
            maximum_mass_msun,
            relativistic,
            newtonian,
        })
    }

    /// The TOV maximum mass of the core, M☉: the standard-gravity edge of the radius model.
    pub fn maximum_mass_msun(&self) -> f64 {
        self.maximum_mass_msun
    }

    /// R_TOV(M)/R_Newton(M); `None` at or above the TOV maximum mass or below the lightest
    /// tabulated model.
    pub fn ratio(&self, mass_msun: f64) -> Option<f64> {
        if !(mass_msun.is_finite() && mass_msun > 0.0) || mass_msun >= self.maximum_mass_msun {
            return None;
        }
        let lnm = mass_msun.ln();
        let last_interpolated = self.relativistic.last()?.0;
        if lnm > last_interpolated {
            return tov_radius_ratio(mass_msun, self.core).ok();
        }
        let gr = lagrange(&self.relativistic, lnm)?;
        let nw = lagrange(&self.newtonian, lnm)?;
        Some((gr - nw).exp())
    }
}

/// The process's corrections, one slot per core of [`Core::ALL`].
static CORRECTIONS: [OnceLock<Result<TovCorrection, HotWdError>>; 5] = [
    OnceLock::new(),
    OnceLock::new(),
    OnceLock::new(),
    OnceLock::new(),
    OnceLock::new(),
];

/// The slot of `core` in [`CORRECTIONS`].
fn slot(core: Core) -> &'static OnceLock<Result<TovCorrection, HotWdError>> {
    &CORRECTIONS[Core::ALL.iter().position(|c| *c == core).unwrap_or(0)]
}

/// The cached correction of `core` (computed at first use, once per process, unless
/// [`provide`]d before).
pub fn tov_correction(core: Core) -> Result<&'static TovCorrection, HotWdError> {
    slot(core)
        .get_or_init(|| TovCorrection::compute(core))
        .as_ref()
        .map_err(Clone::clone)
}

/// Installs a correction kept from an earlier run (e.g. by the pipeline's theory cache) as the
/// process's correction of its core, so that it is not computed again. Returns `false` (and
/// changes nothing) when that core's correction is already there.
pub fn provide(correction: TovCorrection) -> bool {
    slot(correction.core).set(Ok(correction)).is_ok()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::theory::hot_wd::tov_maximum_mass_msun;

    #[test]
    fn tabulated_ratio_matches_direct_solves() {
        // The direct root-found TOV and Newtonian solves of the same matter (cold.rs) are the
        // reference; the interpolation error is measured here.
        let mut worst: f64 = 0.0;
        for (core, masses) in [
            (
                Core::CarbonOxygen,
                &[0.3, 0.6, 0.87, 1.0, 1.13, 1.2, 1.3, 1.35][..],
            ),
            (Core::Helium, &[0.2, 0.33, 0.45, 0.55][..]),
            (Core::OxygenNeon, &[1.0, 1.1, 1.25, 1.3][..]),
        ] {
            let t = tov_correction(core).unwrap();
            for &m in masses {
                let direct = tov_radius_ratio(m, core).unwrap();
                let tab = t.ratio(m).unwrap();
                worst = worst.max((tab / direct - 1.0).abs());
                println!("{core:?} {m}: R_TOV/R_Newton = {direct:.7} (table {tab:.7})");
                assert!(
                    (tab / direct - 1.0).abs() < 1.5e-5,
                    "{core:?} {m}: {tab} vs {direct}"
                );
            }
        }
        println!("largest interpolation error of R_TOV/R_Newton: {worst:.2e}");
    }

    #[test]
    fn maximum_mass_of_carbon_against_the_literature() {
        // General relativity with Salpeter's equation of state: ≈ 1.386 M☉ for pure carbon
        // (Rotondo, Rueda, Ruffini & Xue 2011, Phys. Rev. D 84, 084007 — from memory, their EOS
        // has Salpeter's further terms as well); about 2.7 % below our Newtonian 1.4235 M☉.
        let m = tov_correction(Core::Carbon).unwrap().maximum_mass_msun();
        assert!((m - 1.386).abs() < 0.005, "{m}");
        // Ordering by the lattice term's strength, as in the Newtonian limits (He > C > O).
        let he = tov_correction(Core::Helium).unwrap().maximum_mass_msun();
        let o = tov_correction(Core::Oxygen).unwrap().maximum_mass_msun();
        assert!(he > m && m > o);
    }

    #[test]
    fn maximum_mass_is_the_edge() {
        // Same value as the direct Brent maximisation (cold.rs); C/O: 1.3836 M☉ (computed, and
        // recorded in docs/white-dwarfs.md).
        let t = tov_correction(Core::CarbonOxygen).unwrap();
        let direct = tov_maximum_mass_msun(Core::CarbonOxygen).unwrap();
        assert!((t.maximum_mass_msun() - direct).abs() < 1e-9);
        for core in Core::ALL {
            println!(
                "{core:?}: M_max,TOV = {:.5} M☉",
                tov_correction(core).unwrap().maximum_mass_msun()
            );
        }
        assert!((t.maximum_mass_msun() - 1.3836).abs() < 1e-4);
        assert!(t.ratio(direct).is_none());
        assert!(t.ratio(direct - 0.005).is_some());
    }
}
