//! Why a structure solve has no model: one typed reason per physical or numerical failure.
//!
//! Outside the physical range of (n, ϒ, τ) no static star exists; the theory then returns a
//! [`TheoryError`] that names the reason, and grids record it per point instead of a NaN
//! (`docs/structure.md` §1.3–1.4, §3.7). [`TheoryError::code`] gives a short, stable tag for tables.
//!
//! ```
//! use dwarfbound::theory::error::TheoryError;
//! use dwarfbound::theory::lane_emden::ModifiedLaneEmden;
//! use dwarfbound::theory::Anisotropy;
//!
//! // ϒ ≤ −2/3 leaves no regular centre (docs/structure.md §1.4).
//! let err = ModifiedLaneEmden::new(1.5, -0.7, 0.0, Anisotropy::None).unwrap_err();
//! assert!(matches!(err, TheoryError::NoRegularCentre { .. }));
//! assert_eq!(err.code(), "no-regular-centre");
//! ```

/// A structure solve that has no model, with the reason.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum TheoryError {
    /// The central expansion θ ≈ 1 − aξ² has a ≤ 0: gravity at the centre does not pull
    /// inwards, no regular static star exists (ϒ ≤ −2(1−τ)/3 for ansatz (a), ϒ ≤ −2/3 for (b)).
    #[error(
        "no regular centre: central coefficient a = {a:.6e} ≤ 0 at ϒ = {upsilon}, τ = {tau} \
         (a star needs ϒ > {upsilon_min:.6})"
    )]
    NoRegularCentre {
        /// The central coefficient a of θ ≈ 1 − aξ².
        a: f64,
        /// ϒ asked for.
        upsilon: f64,
        /// τ asked for.
        tau: f64,
        /// The existence bound on ϒ at this τ and ansatz.
        upsilon_min: f64,
    },
    /// The denominator D = 1 + κπϒGρr²/c_s² of the explicit pressure gradient fell to ≤ 1e-9:
    /// the gradient is undetermined and no regular solution passes (`docs/structure.md` §1.3).
    #[error("the structure equation's denominator vanishes (D = {d:.3e}) at ξ = {xi:.6}")]
    DenominatorVanishes {
        /// Dimensionless radius (ξ, or η for the white-dwarf EOS) where D vanished.
        xi: f64,
        /// The value of D found there.
        d: f64,
    },
    /// θ (or the enthalpy) did not reach zero before `xi_max` or within the step budget.
    #[error("no surface found up to ξ = {xi_reached:.6}")]
    NoSurface {
        /// How far the integration got.
        xi_reached: f64,
    },
    /// The polytropic index is outside what the equations support (`docs/structure.md` §3.5.5).
    #[error("unsupported polytropic index n = {n}: {why}")]
    UnsupportedIndex {
        /// The index asked for.
        n: f64,
        /// Why it is refused.
        why: &'static str,
    },
    /// A white-dwarf mass at or above the Chandrasekhar mass M_Ch(ϒ, τ, μ_e): no model exists.
    #[error("mass {mass_msun} M☉ is not below the Chandrasekhar mass {m_ch_msun:.6} M☉")]
    AboveChandrasekhar {
        /// The mass asked for, M☉.
        mass_msun: f64,
        /// The Chandrasekhar mass at this (ϒ, τ, μ_e), M☉.
        m_ch_msun: f64,
    },
    /// A parameter outside its domain (non-finite, τ ≥ 1, μ_e ≤ 0, …).
    #[error("invalid parameter {name} = {value}: {why}")]
    InvalidParameter {
        /// The parameter's name as used in the API.
        name: &'static str,
        /// The value given.
        value: f64,
        /// What the domain is.
        why: &'static str,
    },
    /// The integrator failed without a physical reason being found (step size underflow, or
    /// inputs it cannot use).
    #[error("numerical failure at ξ = {xi:.6}: {why}")]
    NumericalFailure {
        /// Where it failed.
        xi: f64,
        /// What failed.
        why: &'static str,
    },
}

impl TheoryError {
    /// A short, stable tag for the reason (for tables and JSON): `no-regular-centre`,
    /// `denominator-vanishes`, `no-surface`, `unsupported-index`, `above-chandrasekhar`,
    /// `invalid-parameter`, `numerical-failure`.
    pub fn code(&self) -> &'static str {
        match self {
            TheoryError::NoRegularCentre { .. } => "no-regular-centre",
            TheoryError::DenominatorVanishes { .. } => "denominator-vanishes",
            TheoryError::NoSurface { .. } => "no-surface",
            TheoryError::UnsupportedIndex { .. } => "unsupported-index",
            TheoryError::AboveChandrasekhar { .. } => "above-chandrasekhar",
            TheoryError::InvalidParameter { .. } => "invalid-parameter",
            TheoryError::NumericalFailure { .. } => "numerical-failure",
        }
    }
}

impl From<crate::theory::ode::OdeError<TheoryError>> for TheoryError {
    fn from(e: crate::theory::ode::OdeError<TheoryError>) -> Self {
        use crate::theory::ode::OdeError;
        match e {
            OdeError::Rhs { error, .. } => error,
            OdeError::StepTooSmall { x } => TheoryError::NumericalFailure {
                xi: x,
                why: "step size underflow",
            },
            OdeError::TooManySteps { x, .. } => TheoryError::NoSurface { xi_reached: x },
            OdeError::InvalidInput(why) => TheoryError::NumericalFailure { xi: 0.0, why },
        }
    }
}
