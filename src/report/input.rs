//! The plain, already-computed data the report renders.
//!
//! The confrontation fills these types; the report only formats them. Nothing here is derived
//! from physics inside the report: every number arrives prepared, so the report cannot disagree
//! with `summary.json`, `objects.csv` or `grid.csv`.
//!
//! ```
//! use dwarfbound::report::{AllowedMap, Level};
//! let map = AllowedMap {
//!     upsilon: vec![-0.1, 0.0, 0.1],
//!     tau: vec![-0.1, 0.1],
//!     delta_chi2: vec![Some(3.0), Some(0.0), Some(3.0), Some(9.0), None, Some(9.0)],
//!     levels: Level::two_parameter_defaults(),
//!     class_outlines: vec![],
//!     best_fit: (0.0, -0.1),
//!     standard_gravity: (0.0, 0.0),
//!     anisotropy_name: "quadratic in density".into(),
//!     disfavoured_below_upsilon: None,
//! };
//! assert!(map.validate().is_ok());
//! ```

use super::ReportError;

/// One confidence level: its display label and its Δχ² threshold.
#[derive(Debug, Clone, PartialEq)]
pub struct Level {
    /// Display label, e.g. `"95.45 %"`.
    pub label: String,
    /// Δχ² threshold: a grid point is allowed at this level when Δχ² ≤ threshold.
    pub threshold: f64,
}

impl Level {
    /// The three two-parameter levels used throughout: 68.27 / 95.45 / 99.73 % with Δχ² ≤
    /// 2.2957 / 6.1801 / 11.8292 (Particle Data Group, Review of Particle Physics, "Statistics",
    /// table of Δχ² for joint estimation of two parameters).
    pub fn two_parameter_defaults() -> [Level; 3] {
        [
            Level {
                label: "68.27 %".into(),
                threshold: 2.2957,
            },
            Level {
                label: "95.45 %".into(),
                threshold: 6.1801,
            },
            Level {
                label: "99.73 %".into(),
                threshold: 11.8292,
            },
        ]
    }
}

/// One class's own Δχ² over the grid, drawn as a thin outline of its region allowed at the
/// middle level of [`AllowedMap::levels`] (95.45 %).
#[derive(Debug, Clone, PartialEq)]
pub struct ClassOutline {
    /// Class label as shown in the legend, e.g. `"white_dwarf"`.
    pub class_label: String,
    /// That class's Δχ² (relative to its own minimum), row-major `[tau][upsilon]`, `None` where
    /// there is no model.
    pub delta_chi2: Vec<Option<f64>>,
}

/// The joint Δχ² over the (ϒ, τ) grid, ready to be drawn as an allowed-region map.
#[derive(Debug, Clone, PartialEq)]
pub struct AllowedMap {
    /// ϒ grid values, strictly ascending.
    pub upsilon: Vec<f64>,
    /// τ grid values, strictly ascending.
    pub tau: Vec<f64>,
    /// Joint Δχ², row-major `[tau][upsilon]` (index `it * upsilon.len() + iu`); `None` = no
    /// model at that grid point (solver failure, outside an existence bound).
    pub delta_chi2: Vec<Option<f64>>,
    /// The three levels, thresholds ascending (innermost first).
    pub levels: [Level; 3],
    /// Each class's own region, drawn as thin dashed outlines.
    pub class_outlines: Vec<ClassOutline>,
    /// Best-fit point (ϒ, τ).
    pub best_fit: (f64, f64),
    /// The standard-gravity point (ϒ, τ) = (0, 0), marked and labelled.
    pub standard_gravity: (f64, f64),
    /// The anisotropy ansatz τ belongs to, used in the τ axis label.
    pub anisotropy_name: String,
    /// Optional vertical marker: ϒ below this value is theoretically disfavoured (for example
    /// the relativistic existence bound), with its label. Drawn, never used to cut the map.
    pub disfavoured_below_upsilon: Option<(f64, String)>,
}

/// One curve of a bound against ϒ at fixed τ.
#[derive(Debug, Clone, PartialEq)]
pub struct BoundSeries {
    /// Which bound, e.g. `"MMHB"` or `"Chandrasekhar mass"`; series with the same label and unit
    /// share a panel.
    pub bound_label: String,
    /// Unit of the values, e.g. `"M☉"`.
    pub unit: String,
    /// The τ of this curve.
    pub tau: f64,
    /// The bound at each [`BoundsCurves::upsilon`]; `None` where there is no model (the curve is
    /// broken there).
    pub values: Vec<Option<f64>>,
}

/// Predicted bounds against ϒ for a few τ.
#[derive(Debug, Clone, PartialEq)]
pub struct BoundsCurves {
    /// ϒ values shared by every series, strictly ascending.
    pub upsilon: Vec<f64>,
    /// The curves; grouped into panels by (bound label, unit) in order of first appearance.
    pub series: Vec<BoundSeries>,
}

/// `start:stop:count` of one grid axis.
#[derive(Debug, Clone, PartialEq)]
pub struct AxisSpec {
    /// First value.
    pub start: f64,
    /// Last value (inclusive).
    pub stop: f64,
    /// Number of values.
    pub count: usize,
}

/// The grid the confrontation ran on.
#[derive(Debug, Clone, PartialEq)]
pub struct GridDescription {
    /// The ϒ axis.
    pub upsilon: AxisSpec,
    /// The τ axis.
    pub tau: AxisSpec,
    /// The anisotropy ansatz τ belongs to.
    pub anisotropy: String,
    /// Grid points without a model (solver failure, outside an existence bound).
    pub points_without_model: usize,
}

/// The model assumptions, stated in words by the confrontation.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ModelDescription {
    /// The stellar-structure model (e.g. the modified Lane–Emden system and its polytropes).
    pub structure: String,
    /// The anisotropy ansatz and what τ means.
    pub anisotropy_ansatz: String,
    /// MMHB model (luminosity balance or ignition temperature).
    pub mmhb_model: String,
    /// MMHB mode (raw or anchored).
    pub mmhb_mode: String,
    /// MMHB anchor (value and its source).
    pub mmhb_anchor: String,
    /// Theory floors of each bound and whether they are applied per object or shared.
    pub theory_floor: String,
    /// White-dwarf assumptions (EOS, μ_e, Newtonian order).
    pub white_dwarf: String,
    /// The likelihood used (product of consistency probabilities, or population-aware).
    pub likelihood: String,
    /// Any further assumptions as (name, text) pairs, shown in order.
    pub extra: Vec<(String, String)>,
}

/// One input catalogue and what happened to its rows.
#[derive(Debug, Clone, PartialEq)]
pub struct CatalogueSummary {
    /// The path as given by the user.
    pub path: String,
    /// Data rows read.
    pub rows_in: usize,
    /// Rows accepted.
    pub rows_accepted: usize,
    /// Rows quarantined (listed in `quarantine.csv`).
    pub rows_quarantined: usize,
    /// SHA-256 of the file's bytes, lower-case hex.
    pub sha256: String,
}

/// The best grid point.
#[derive(Debug, Clone, PartialEq)]
pub struct BestFit {
    /// ϒ at the best fit.
    pub upsilon: f64,
    /// τ at the best fit.
    pub tau: f64,
    /// −2 ln L there.
    pub minus_two_ln_l: f64,
    /// True when the best fit lies on the edge of the grid (the minimum may lie outside).
    pub on_grid_edge: bool,
    /// When the best grid point is not unique: the points within a small Δχ² of it, which reach
    /// beyond its neighbours (`None`: the best fit names a place).
    pub not_unique: Option<NearBest>,
}

/// Grid points that cannot be told from the best fit (Δχ² ≤ `dchi2` of it).
#[derive(Debug, Clone, PartialEq)]
pub struct NearBest {
    /// The Δχ² within which a point cannot be told from the best one.
    pub dchi2: f64,
    /// How many.
    pub n_points: usize,
    /// Their share of the grid.
    pub fraction_of_grid: f64,
    /// Smallest and largest ϒ among them.
    pub upsilon: (f64, f64),
    /// Smallest and largest τ among them.
    pub tau: (f64, f64),
}

/// Extent of the region allowed at one level (two-parameter Δχ²).
#[derive(Debug, Clone, PartialEq)]
pub struct AllowedRange {
    /// Level label, e.g. `"95.45 %"`.
    pub level: String,
    /// Smallest allowed ϒ on the grid (`None` if nothing is allowed).
    pub upsilon_min: Option<f64>,
    /// Largest allowed ϒ on the grid.
    pub upsilon_max: Option<f64>,
    /// Smallest allowed τ on the grid.
    pub tau_min: Option<f64>,
    /// Largest allowed τ on the grid.
    pub tau_max: Option<f64>,
    /// Fraction of grid points allowed, in [0, 1].
    pub fraction_of_grid: f64,
}

/// One-parameter interval in ϒ at τ = 0 at one level.
#[derive(Debug, Clone, PartialEq)]
pub struct UpsilonInterval {
    /// Level label, e.g. `"95.45 %"`.
    pub level: String,
    /// Lower end; `None` when the grid does not close it (shown as "open").
    pub lower: Option<f64>,
    /// Upper end; `None` when the grid does not close it (shown as "open").
    pub upper: Option<f64>,
}

/// Standard gravity (ϒ = τ = 0) against the data.
#[derive(Debug, Clone, PartialEq)]
pub struct StandardGravityStatus {
    /// Allowed at 95.45 %? `None` when (0, 0) is not on the grid or has no model.
    pub allowed_cl95: Option<bool>,
    /// −2 ln L at (0, 0), if evaluated.
    pub minus_two_ln_l: Option<f64>,
    /// Δχ² at (0, 0), if evaluated.
    pub delta_chi2: Option<f64>,
}

/// An object with a small probability at the best fit, named when the catalogue is inconsistent.
#[derive(Debug, Clone, PartialEq)]
pub struct WorstObject {
    /// Object id (from the user's file).
    pub id: String,
    /// Object class.
    pub class: String,
    /// Probability of consistency at the best fit.
    pub probability: f64,
}

/// The absolute consistency test: the smallest per-object probability with the Šidák correction
/// for the number of informative objects (method in the project docs, docs/).
#[derive(Debug, Clone, PartialEq)]
pub struct Consistency {
    /// True when some grid point is consistent with the catalogue at 95.45 %.
    pub consistent: bool,
    /// The look-elsewhere-corrected p_cat = 1 − (1 − P_min)^N_inf.
    pub p_catalogue: f64,
    /// Number of informative objects N_inf.
    pub n_informative: usize,
    /// Objects with the smallest probabilities at the best fit, smallest first.
    pub worst_objects: Vec<WorstObject>,
}

/// One object in tension with standard gravity.
#[derive(Debug, Clone, PartialEq)]
pub struct TensionRow {
    /// Object id (from the user's file).
    pub id: String,
    /// Object class.
    pub class: String,
    /// Prepared mass text with errors or limit, e.g. `"0.0712 +0.0020/−0.0030 M☉"`.
    pub mass_text: String,
    /// Tension in σ at ϒ = τ = 0.
    pub sigma_standard_gravity: f64,
    /// Tension in σ at the best fit.
    pub sigma_best_fit: Option<f64>,
    /// False for a mass-bound tension (one-sided, positive = wrong side of the bound), true for
    /// a mass–radius tension (two-sided, signed): the report never lists the two under one
    /// heading.
    pub two_sided: bool,
}

/// Objects above the tension threshold at the standard-gravity point.
#[derive(Debug, Clone, PartialEq)]
pub struct TensionTable {
    /// The configured threshold in σ.
    pub threshold_sigma: f64,
    /// Rows, in the order to show (largest tension first is expected).
    pub rows: Vec<TensionRow>,
}

/// How far removing one object moves the 95.45 % ϒ interval at τ = 0.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Shift {
    /// Both ends stay closed or open; the larger end shift.
    Finite(f64),
    /// An end opens or closes when the object is removed.
    EndOpensOrCloses,
}

/// One leave-one-out driver.
#[derive(Debug, Clone, PartialEq)]
pub struct DriverRow {
    /// Rank, 1 = largest influence.
    pub rank: usize,
    /// Object id (from the user's file).
    pub id: String,
    /// Object class.
    pub class: String,
    /// Shift of the interval.
    pub shift: Shift,
    /// The test it drives through, with its sidedness, e.g. `"mass bound (one-sided)"`.
    pub test: String,
    /// Tension in σ at the best fit of that test.
    pub sigma_best_fit: Option<f64>,
}

/// One row of the table of one-parameter intervals shown beside the τ = 0 slice.
#[derive(Debug, Clone, PartialEq)]
pub struct IntervalRow {
    /// The parameter, `"ϒ"` or `"τ"`.
    pub parameter: String,
    /// How the interval is read, e.g. `"profile over τ"`.
    pub method: String,
    /// The interval per level, innermost first; `None` ends are open.
    pub intervals: Vec<UpsilonInterval>,
}

/// The readings beside the τ = 0 slice: the slice with and without the shared systematic, the
/// profile intervals, the flat-prior posterior's credible intervals and regions.
#[derive(Debug, Clone, PartialEq)]
pub struct SideBySide {
    /// The rows of the table (slice, profile, posterior).
    pub rows: Vec<IntervalRow>,
    /// The posterior's highest-density regions per level (bounding boxes on the grid).
    pub hpd_regions: Vec<AllowedRange>,
    /// The priors, stated.
    pub prior: String,
    /// What the drivers and tensions are computed with, in words.
    pub formulas: Vec<String>,
}

/// What one class contributes.
#[derive(Debug, Clone, PartialEq)]
pub struct ClassContribution {
    /// Class label (matches a [`ClassOutline::class_label`] when that class has an outline).
    pub class: String,
    /// Accepted objects of this class.
    pub n_objects: usize,
    /// Informative objects (not skipped by the reduction).
    pub n_informative: usize,
    /// This class's −2 ln L at the best fit.
    pub minus_two_ln_l_at_best_fit: f64,
    /// In words: which parameter this class constrains and how strongly.
    pub summary: String,
}

/// The measured error of the one-dimensional reduction: each bound's term of the likelihood
/// tabulated in its bound and interpolated over the grid, one entry per term as the fit uses it.
#[derive(Debug, Clone, PartialEq)]
pub struct ReductionError {
    /// One per bound's term, in the likelihood's order.
    pub terms: Vec<TermTabulation>,
}

/// How one bound's term was tabulated and how far the table was found from the direct
/// evaluation.
#[derive(Debug, Clone, PartialEq)]
pub struct TermTabulation {
    /// The bound, as the report names it ("MMHB", "Chandrasekhar mass").
    pub bound: String,
    /// The likelihood model ("calibrated", "product").
    pub likelihood: String,
    /// Nodes of the data term in the bound.
    pub data_nodes: usize,
    /// Nodes of the table of the term with the shared shift eliminated, if there is one.
    pub table_nodes: Option<usize>,
    /// Bound values the table was checked at.
    pub check_points: usize,
    /// Largest |Δχ²_tabulated − Δχ²_direct| found.
    pub max_abs_delta_chi2: f64,
}

/// Warnings the confrontation raised; each has a fixed explanation in the report.
#[derive(Debug, Clone, PartialEq)]
pub enum Warning {
    /// Many informative objects of both opposing classes crowd the MMHB, where the plain product
    /// of probabilities is biased toward the sparser side (calibration caveat in the project docs,
    /// docs/).
    Crowding {
        /// Informative `hburning` objects within 3σ of the MMHB at the best fit.
        n_hburning: usize,
        /// Informative `brown_dwarf` objects within 3σ of the MMHB at the best fit.
        n_brown_dwarf: usize,
    },
    /// White dwarfs compact enough that post-Newtonian corrections may matter.
    PostNewtonianWhiteDwarf {
        /// Their ids.
        ids: Vec<String>,
        /// The compactness GM/(Rc²) above which the warning fires.
        compactness_threshold: f64,
    },
    /// Part of the grid lies below a relativistic existence bound (theoretically disfavoured,
    /// not used to cut the statistics).
    BelowRelativisticExistenceBound {
        /// The bound on ϒ.
        upsilon_bound: f64,
        /// Its source, e.g. "Babichev et al. 2016".
        source: String,
    },
    /// Any other warning, as text.
    Other(String),
}

/// Everything the report shows besides the two plots.
#[derive(Debug, Clone, PartialEq)]
pub struct ReportInput {
    /// Report title.
    pub title: String,
    /// Generation time; appears in exactly one line marked with [`super::VOLATILE_MARKER`] so
    /// byte comparisons can drop it.
    pub generated_at: String,
    /// dwarfbound version.
    pub version: String,
    /// Model assumptions.
    pub model: ModelDescription,
    /// The grid.
    pub grid: GridDescription,
    /// Input catalogues.
    pub catalogues: Vec<CatalogueSummary>,
    /// Best fit.
    pub best_fit: BestFit,
    /// Allowed ranges per level, innermost first.
    pub allowed: Vec<AllowedRange>,
    /// ϒ interval at τ = 0 per level (one-parameter Δχ²), innermost first.
    pub upsilon_interval_at_tau0: Vec<UpsilonInterval>,
    /// Standard gravity's status.
    pub standard_gravity: StandardGravityStatus,
    /// The absolute consistency verdict.
    pub consistency: Consistency,
    /// Tensions with standard gravity.
    pub tensions: TensionTable,
    /// Leave-one-out drivers (top ten expected).
    pub drivers: Vec<DriverRow>,
    /// The other one-parameter readings, shown beside the τ = 0 interval (`None`: not shown).
    pub side_by_side: Option<SideBySide>,
    /// Per-class contributions.
    pub class_contributions: Vec<ClassContribution>,
    /// Measured reduction error, if the reduction was used.
    pub reduction_error: Option<ReductionError>,
    /// Warnings raised by the confrontation.
    pub warnings: Vec<Warning>,
    /// Extra cautions beyond the fixed ones the report always states.
    pub cautions: Vec<String>,
    /// The difference from the previous run of a nightly job, one line each (`None` outside
    /// `run`; an empty list means nothing changed).
    pub since_previous: Option<Vec<String>>,
}

fn finite(name: &str, x: f64) -> Result<(), ReportError> {
    if x.is_finite() {
        Ok(())
    } else {
        Err(ReportError::InvalidInput(format!("{name} is not finite")))
    }
}

fn ascending(name: &str, xs: &[f64]) -> Result<(), ReportError> {
    if xs.is_empty() {
        return Err(ReportError::InvalidInput(format!("{name} is empty")));
    }
    for &x in xs {
        finite(name, x)?;
    }
    if xs.windows(2).any(|w| w[1] <= w[0]) {
        return Err(ReportError::InvalidInput(format!(
            "{name} is not strictly ascending"
        )));
    }
    Ok(())
}

fn grid_values(name: &str, values: &[Option<f64>], expected: usize) -> Result<(), ReportError> {
    if values.len() != expected {
        return Err(ReportError::InvalidInput(format!(
            "{name} has {} values, the grid has {expected} points",
            values.len()
        )));
    }
    if values.iter().flatten().any(|v| !v.is_finite()) {
        return Err(ReportError::InvalidInput(format!(
            "{name} holds a non-finite value (use None for a point without a model)"
        )));
    }
    Ok(())
}

impl AllowedMap {
    /// True when the map is drawn as regions with class outlines (both axes have two or more
    /// values); a single row or column is drawn as one square per point instead.
    pub fn is_two_dimensional(&self) -> bool {
        self.upsilon.len() >= 2 && self.tau.len() >= 2
    }

    /// Checks shapes, ordering and finiteness so drawing never meets NaN or a ragged grid.
    pub fn validate(&self) -> Result<(), ReportError> {
        ascending("allowed map ϒ axis", &self.upsilon)?;
        ascending("allowed map τ axis", &self.tau)?;
        let n = self.upsilon.len() * self.tau.len();
        grid_values("allowed map Δχ²", &self.delta_chi2, n)?;
        for c in &self.class_outlines {
            grid_values(&format!("class {} Δχ²", c.class_label), &c.delta_chi2, n)?;
        }
        for l in &self.levels {
            finite("level threshold", l.threshold)?;
            if l.threshold <= 0.0 {
                return Err(ReportError::InvalidInput(
                    "level thresholds must be positive".into(),
                ));
            }
        }
        if self
            .levels
            .windows(2)
            .any(|w| w[1].threshold <= w[0].threshold)
        {
            return Err(ReportError::InvalidInput(
                "level thresholds must be strictly ascending".into(),
            ));
        }
        finite("best-fit ϒ", self.best_fit.0)?;
        finite("best-fit τ", self.best_fit.1)?;
        finite("standard-gravity ϒ", self.standard_gravity.0)?;
        finite("standard-gravity τ", self.standard_gravity.1)?;
        if let Some((u, _)) = &self.disfavoured_below_upsilon {
            finite("disfavoured ϒ", *u)?;
        }
        Ok(())
    }
}

impl BoundsCurves {
    /// Checks shapes, ordering and finiteness.
    pub fn validate(&self) -> Result<(), ReportError> {
        ascending("bounds ϒ axis", &self.upsilon)?;
        for s in &self.series {
            finite("series τ", s.tau)?;
            grid_values(
                &format!("series {} at τ = {}", s.bound_label, s.tau),
                &s.values,
                self.upsilon.len(),
            )?;
        }
        Ok(())
    }
}

impl ReportInput {
    /// Checks that every number the report prints is finite.
    pub fn validate(&self) -> Result<(), ReportError> {
        let b = &self.best_fit;
        finite("best-fit ϒ", b.upsilon)?;
        finite("best-fit τ", b.tau)?;
        finite("best-fit −2 ln L", b.minus_two_ln_l)?;
        for a in &self.allowed {
            for x in [a.upsilon_min, a.upsilon_max, a.tau_min, a.tau_max]
                .into_iter()
                .flatten()
            {
                finite("allowed range", x)?;
            }
            finite("fraction of grid", a.fraction_of_grid)?;
        }
        for i in &self.upsilon_interval_at_tau0 {
            for x in [i.lower, i.upper].into_iter().flatten() {
                finite("ϒ interval end", x)?;
            }
        }
        if let Some(sb) = &self.side_by_side {
            for r in &sb.rows {
                for i in &r.intervals {
                    for x in [i.lower, i.upper].into_iter().flatten() {
                        finite("interval end", x)?;
                    }
                }
            }
            for a in &sb.hpd_regions {
                for x in [a.upsilon_min, a.upsilon_max, a.tau_min, a.tau_max]
                    .into_iter()
                    .flatten()
                {
                    finite("credible region", x)?;
                }
            }
        }
        let s = &self.standard_gravity;
        for x in [s.minus_two_ln_l, s.delta_chi2].into_iter().flatten() {
            finite("standard-gravity value", x)?;
        }
        finite("p_cat", self.consistency.p_catalogue)?;
        for w in &self.consistency.worst_objects {
            finite("object probability", w.probability)?;
        }
        finite("tension threshold", self.tensions.threshold_sigma)?;
        for t in &self.tensions.rows {
            finite("tension", t.sigma_standard_gravity)?;
            if let Some(x) = t.sigma_best_fit {
                finite("tension at best fit", x)?;
            }
        }
        for d in &self.drivers {
            if let Shift::Finite(x) = d.shift {
                finite("driver shift", x)?;
            }
            if let Some(x) = d.sigma_best_fit {
                finite("driver tension", x)?;
            }
        }
        for c in &self.class_contributions {
            finite("class −2 ln L", c.minus_two_ln_l_at_best_fit)?;
        }
        if let Some(r) = &self.reduction_error {
            for t in &r.terms {
                finite("reduction error", t.max_abs_delta_chi2)?;
            }
        }
        for w in &self.warnings {
            if let Warning::PostNewtonianWhiteDwarf {
                compactness_threshold,
                ..
            } = w
            {
                finite("compactness threshold", *compactness_threshold)?;
            }
            if let Warning::BelowRelativisticExistenceBound { upsilon_bound, .. } = w {
                finite("existence bound", *upsilon_bound)?;
            }
        }
        for a in [&self.grid.upsilon, &self.grid.tau] {
            finite("grid start", a.start)?;
            finite("grid stop", a.stop)?;
        }
        Ok(())
    }
}
