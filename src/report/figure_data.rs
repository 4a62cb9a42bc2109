//! The plain data of the figures that show the data against the theory: each class's masses
//! against its bound, the white-dwarf mass–radius diagram and the Δχ² profile along τ = 0.
//!
//! Like [`crate::report::ReportInput`], everything arrives computed (model radii, Δχ², interval
//! ends); the report only draws it. A figure whose data is `None` is not drawn.
//!
//! ```
//! use dwarfbound::report::{DataFigures, ProfileTau0};
//! let profile = ProfileTau0 {
//!     upsilon: vec![-0.1, 0.0, 0.1],
//!     delta_chi2: vec![4.0, 0.0, 4.0],
//!     thresholds: vec![("68.27 %".into(), 1.0), ("95.45 %".into(), 4.0)],
//!     intervals: vec![("95.45 %".into(), Some(-0.1), Some(0.1))],
//!     profile_over_tau: vec![],
//! };
//! let figs = DataFigures { wd_mass_radius: None, profile_tau0: Some(profile), mass_bounds: None };
//! assert!(figs.validate().is_ok());
//! ```

use super::ReportError;

/// Where a white dwarf with a radius stands with respect to the radius test.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum WdPointFlag {
    /// In the radius test.
    InTest,
    /// Left out: its mass comes from a standard-gravity model (circular).
    ModelMass,
    /// Left out: no Teff, so the finite-temperature radius is unknown.
    NoTeff,
    /// Left out: extremely low mass, outside the model's domain.
    Elm,
    /// Left out: outside the finite-temperature table, or for another stated reason.
    OutsideModel,
}

impl WdPointFlag {
    /// Words for legends and hover titles.
    pub fn words(self) -> &'static str {
        match self {
            WdPointFlag::InTest => "in the radius test",
            WdPointFlag::ModelMass => "left out: model mass",
            WdPointFlag::NoTeff => "left out: no Teff",
            WdPointFlag::Elm => "left out: extremely low mass",
            WdPointFlag::OutsideModel => "left out: outside the model",
        }
    }
}

/// One white dwarf with a measured radius.
#[derive(Debug, Clone, PartialEq)]
pub struct WdPoint {
    /// Catalogue id.
    pub id: String,
    /// Mass, M☉.
    pub mass_msun: f64,
    /// Mass error below and above, M☉ (`None`: no error stated).
    pub mass_err_msun: Option<(f64, f64)>,
    /// Radius, R☉.
    pub radius_rsun: f64,
    /// Radius error, R☉.
    pub radius_err_rsun: Option<f64>,
    /// Effective temperature, K.
    pub teff_k: Option<f64>,
    /// Signed tension with the standard-gravity mass–radius relation, σ.
    pub sigma: Option<f64>,
    /// Its place in the radius test.
    pub flag: WdPointFlag,
}

/// One model mass–radius curve; breaks where there is no model are separate runs.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelCurve {
    /// Legend label, e.g. `"10 000 K"`.
    pub label: String,
    /// Runs of (mass M☉, radius R☉), mass ascending.
    pub runs: Vec<Vec<(f64, f64)>>,
    /// Drawn dashed: the curve at the best fit rather than at standard gravity.
    pub best_fit: bool,
    /// Index of its colour among the standard curves (a best-fit curve shares its partner's).
    pub colour_index: usize,
}

/// The white-dwarf mass–radius diagram.
#[derive(Debug, Clone, PartialEq)]
pub struct WdMassRadius {
    /// Every white dwarf with a measured radius.
    pub points: Vec<WdPoint>,
    /// Model curves at standard gravity and at the best fit.
    pub curves: Vec<ModelCurve>,
    /// Number of distinct colours among the curves.
    pub n_colours: usize,
    /// The best-fit point (ϒ, τ) the dashed curves are drawn at.
    pub best_fit: (f64, f64),
    /// Objects with |σ| above this are highlighted.
    pub tension_sigma: f64,
    /// One line on the model the curves come from (cores, envelopes).
    pub model_note: String,
}

/// The one-parameter Δχ² along τ = 0 on the fine ϒ axis.
#[derive(Debug, Clone, PartialEq)]
pub struct ProfileTau0 {
    /// ϒ, ascending.
    pub upsilon: Vec<f64>,
    /// Δχ² relative to the slice minimum, one per ϒ.
    pub delta_chi2: Vec<f64>,
    /// (label, Δχ²) of the one-parameter thresholds, e.g. ("95.45 %", 4).
    pub thresholds: Vec<(String, f64)>,
    /// (level label, lower end, upper end); `None` = open at that end.
    pub intervals: Vec<(String, Option<f64>, Option<f64>)>,
    /// The profile over τ on the grid's ϒ nodes: (ϒ, Δχ² of min over τ, relative to the global
    /// minimum), drawn beside the slice; empty when the grid has a single τ.
    pub profile_over_tau: Vec<(f64, f64)>,
}

/// How an object stands in its class's mass test.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MassMark {
    /// In the fit.
    InFit,
    /// Left out: younger than the age cut (may not burn steadily yet).
    Young,
    /// Left out: mass from a standard-gravity model (circular).
    ModelMass,
    /// Left out for another stated reason (no age, outside the model's domain).
    LeftOut,
}

impl MassMark {
    /// Words for legends and hover titles.
    pub fn words(self) -> &'static str {
        match self {
            MassMark::InFit => "in the fit",
            MassMark::Young => "left out: young",
            MassMark::ModelMass => "left out: model mass",
            MassMark::LeftOut => "left out: other reason",
        }
    }
}

/// One object in a mass panel.
#[derive(Debug, Clone, PartialEq)]
pub struct MassObject {
    /// Catalogue id.
    pub id: String,
    /// Mass, M☉ (for a limit, the limit).
    pub mass_msun: f64,
    /// Error below and above, M☉.
    pub mass_err_msun: Option<(f64, f64)>,
    /// Tension with its bound at standard gravity and at the best fit, σ (one-sided: positive
    /// = wrong side of the bound).
    pub sigma: (Option<f64>, Option<f64>),
    /// Its place in the test.
    pub mark: MassMark,
}

/// One class's masses against its bound.
#[derive(Debug, Clone, PartialEq)]
pub struct MassPanel {
    /// Panel title, e.g. "hydrogen-burning stars (mass ≥ MMHB)".
    pub title: String,
    /// The bound's short name, e.g. "MMHB".
    pub bound_label: String,
    /// The class bound at standard gravity, M☉.
    pub bound_standard_msun: f64,
    /// The class bound at the best fit, M☉.
    pub bound_best_msun: Option<f64>,
    /// The theory floor (1σ), M☉, drawn as a band around the standard bound.
    pub floor_msun: f64,
    /// Objects, in any order (drawn by ascending mass).
    pub objects: Vec<MassObject>,
}

/// Each class's masses against its bound.
#[derive(Debug, Clone, PartialEq)]
pub struct MassBounds {
    /// One panel per class with a mass test.
    pub panels: Vec<MassPanel>,
    /// Objects with σ at standard gravity above this are highlighted.
    pub tension_sigma: f64,
    /// The best-fit point (ϒ, τ).
    pub best_fit: (f64, f64),
}

impl MassBounds {
    /// Rejects NaN or non-positive masses and bounds.
    pub fn validate(&self) -> Result<(), ReportError> {
        let pos = |x: f64| x.is_finite() && x > 0.0;
        for p in &self.panels {
            let ok = pos(p.bound_standard_msun)
                && p.bound_best_msun.is_none_or(pos)
                && p.floor_msun.is_finite()
                && p.objects.iter().all(|o| {
                    pos(o.mass_msun)
                        && o.mass_err_msun
                            .is_none_or(|(a, b)| a.is_finite() && b.is_finite())
                        && o.sigma.0.is_none_or(f64::is_finite)
                        && o.sigma.1.is_none_or(f64::is_finite)
                });
            if !ok {
                return Err(bad("mass panel with a non-finite or non-positive value"));
            }
        }
        Ok(())
    }
}

/// The data-against-theory figures of one report; `None` = not drawn.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct DataFigures {
    /// The white-dwarf mass–radius diagram (only when a white dwarf has a radius).
    pub wd_mass_radius: Option<WdMassRadius>,
    /// The Δχ² profile along τ = 0 (only when the slice exists).
    pub profile_tau0: Option<ProfileTau0>,
    /// Each class's masses against its bound (only when a class has objects).
    pub mass_bounds: Option<MassBounds>,
}

fn bad(what: &str) -> ReportError {
    ReportError::InvalidInput(what.into())
}

impl WdMassRadius {
    /// Rejects NaN and non-positive masses or radii: a bug upstream.
    pub fn validate(&self) -> Result<(), ReportError> {
        let pos = |x: f64| x.is_finite() && x > 0.0;
        for p in &self.points {
            let errs_ok = p
                .mass_err_msun
                .is_none_or(|(a, b)| a.is_finite() && b.is_finite())
                && p.radius_err_rsun.is_none_or(f64::is_finite)
                && p.teff_k.is_none_or(f64::is_finite)
                && p.sigma.is_none_or(f64::is_finite);
            if !(pos(p.mass_msun) && pos(p.radius_rsun) && errs_ok) {
                return Err(bad(
                    "white-dwarf point with a non-finite or non-positive value",
                ));
            }
        }
        let curves_ok = self
            .curves
            .iter()
            .flat_map(|c| c.runs.iter().flatten())
            .all(|&(m, r)| pos(m) && pos(r));
        if !curves_ok || !self.best_fit.0.is_finite() || !self.best_fit.1.is_finite() {
            return Err(bad("white-dwarf model curve with a non-finite value"));
        }
        Ok(())
    }
}

impl ProfileTau0 {
    /// Rejects ragged or non-finite data and an unordered axis.
    pub fn validate(&self) -> Result<(), ReportError> {
        if self.upsilon.len() != self.delta_chi2.len() || self.upsilon.len() < 2 {
            return Err(bad("profile along τ = 0: axis and values differ in length"));
        }
        if !self.upsilon.windows(2).all(|w| w[1] > w[0])
            || !self.delta_chi2.iter().all(|d| d.is_finite())
            || !self.thresholds.iter().all(|t| t.1.is_finite())
            || !self
                .profile_over_tau
                .iter()
                .all(|(u, d)| u.is_finite() && d.is_finite())
        {
            return Err(bad("profile along τ = 0: unordered axis or non-finite Δχ²"));
        }
        Ok(())
    }
}

impl DataFigures {
    /// Validates each figure present.
    pub fn validate(&self) -> Result<(), ReportError> {
        if let Some(w) = &self.wd_mass_radius {
            w.validate()?;
        }
        if let Some(p) = &self.profile_tau0 {
            p.validate()?;
        }
        if let Some(m) = &self.mass_bounds {
            m.validate()?;
        }
        Ok(())
    }
}
