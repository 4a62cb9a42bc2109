//! White dwarfs at finite temperature with hydrogen and helium envelopes, in Newtonian gravity
//! with the ϒ term acting throughout.
//!
//! One job: the photospheric radius R(M, Teff; core, envelope; ϒ) of a white dwarf whose
//! isothermal, Fermi–Dirac core lies under a helium and a hydrogen layer, found by shooting on R
//! from the photosphere to the centre; plus the zero-temperature radius with the Salpeter (1961)
//! lattice term, and a precomputed standard-gravity table of both for fast lookups. The method,
//! equation of state, opacities and boundary conditions follow the project's white-dwarf notes
//! (`docs/`, finite-temperature white dwarfs); Shapiro & Teukolsky (1983, ch. 4) for the
//! core–envelope picture.
//!
//! Submodules: [`eos`] (matter), [`opacity`] (transport), [`cold`] (T = 0 with the lattice
//! term, and its general-relativistic (TOV) counterpart at standard gravity), [`shoot`] (the hot
//! solve), [`table`] (the precomputed R_hot and R_cold at ϒ = 0), [`tov`] (the TOV/Newtonian
//! radius ratio and maximum mass per core, tabulated once).
//!
//! ```
//! use dwarfbound::theory::hot_wd::{Core, Envelope};
//!
//! assert_eq!("co".parse::<Core>().unwrap(), Core::CarbonOxygen);
//! assert_eq!(Core::default_for_mass(0.3), Core::Helium);
//! assert_eq!("thin".parse::<Envelope>().unwrap().hydrogen_fraction(), 1e-10);
//! ```

pub mod cold;
pub mod eos;
pub mod opacity;
pub mod shoot;
pub mod table;
pub mod tov;

use std::str::FromStr;

use crate::theory::error::TheoryError;

pub use cold::{
    cold_radius_rsun, cold_salpeter_radius_rsun, tov_maximum_mass_msun, tov_radius_ratio,
};
pub use shoot::{hot_radius_rsun, HotModel, HotOptions};
pub use table::{HotWdTable, TableRadius};

/// Mass coordinate q = m_above/M of the bottom of the helium layer (the core boundary), where
/// the shooting switches from ln P to r and below which the core is isothermal.
pub const Q_HELIUM_BASE: f64 = 1e-2;

/// Core composition of a white dwarf.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Core {
    /// Pure helium (low-mass white dwarfs).
    Helium,
    /// 50:50 carbon–oxygen by mass.
    CarbonOxygen,
    /// Pure carbon (for comparison with Hamada & Salpeter 1961).
    Carbon,
    /// Pure oxygen (for comparison with Hamada & Salpeter 1961).
    Oxygen,
    /// Oxygen–neon, O 0.6 / Ne 0.4 by mass (a stated choice, typical of ultra-massive models).
    OxygenNeon,
}

impl Core {
    /// Every core.
    pub const ALL: [Core; 5] = [
        Core::Helium,
        Core::CarbonOxygen,
        Core::Carbon,
        Core::Oxygen,
        Core::OxygenNeon,
    ];

    /// The core a white dwarf of this mass most likely has: helium below 0.45 M☉, oxygen–neon
    /// above 1.1 M☉, carbon–oxygen between (common practice, no source; the boundaries of the
    /// catalogue defaults).
    pub fn default_for_mass(mass_msun: f64) -> Core {
        if mass_msun < 0.45 {
            Core::Helium
        } else if mass_msun > 1.1 {
            Core::OxygenNeon
        } else {
            Core::CarbonOxygen
        }
    }

    /// Its name on the command line and in catalogues: `he`, `co`, `c`, `o`, `one`.
    pub fn name(self) -> &'static str {
        match self {
            Core::Helium => "he",
            Core::CarbonOxygen => "co",
            Core::Carbon => "c",
            Core::Oxygen => "o",
            Core::OxygenNeon => "one",
        }
    }

    /// The core's composition.
    pub fn composition(self) -> Composition {
        match self {
            Core::Helium => Composition::helium(),
            Core::CarbonOxygen => Composition::carbon_oxygen(),
            Core::Carbon => Composition::new(&[(6.0, 12.0, 1.0)]),
            Core::Oxygen => Composition::new(&[(8.0, 16.0, 1.0)]),
            Core::OxygenNeon => Composition::new(&[(8.0, 16.0, 0.6), (10.0, 20.0, 0.4)]),
        }
    }
}

/// A core or envelope name that is not one of the known ones.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("unknown white-dwarf {what} '{name}' (expected one of: {expected})")]
pub struct ParseNameError {
    what: &'static str,
    name: String,
    expected: &'static str,
}

impl FromStr for Core {
    type Err = ParseNameError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let t = s.trim().to_ascii_lowercase();
        Core::ALL
            .into_iter()
            .find(|c| c.name() == t)
            .ok_or(ParseNameError {
                what: "core",
                name: s.to_string(),
                expected: "he, co, one, c, o",
            })
    }
}

/// Hydrogen layer of the envelope (the helium layer always reaches q = 1e-2).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Envelope {
    /// M_H/M = 1e-4 (the thickest a DA keeps after the AGB; common practice, no source).
    Thick,
    /// M_H/M = 1e-10.
    Thin,
}

impl Envelope {
    /// Both envelopes.
    pub const ALL: [Envelope; 2] = [Envelope::Thick, Envelope::Thin];

    /// q_H = M_H/M.
    pub fn hydrogen_fraction(self) -> f64 {
        match self {
            Envelope::Thick => 1e-4,
            Envelope::Thin => 1e-10,
        }
    }

    /// Its name: `thick` or `thin`.
    pub fn name(self) -> &'static str {
        match self {
            Envelope::Thick => "thick",
            Envelope::Thin => "thin",
        }
    }
}

impl FromStr for Envelope {
    type Err = ParseNameError;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        match s.trim().to_ascii_lowercase().as_str() {
            "thick" => Ok(Envelope::Thick),
            "thin" => Ok(Envelope::Thin),
            _ => Err(ParseNameError {
                what: "envelope",
                name: s.to_string(),
                expected: "thick, thin",
            }),
        }
    }
}

/// Which of Salpeter's (1961, ApJ 134, 669) zero-temperature electrostatic corrections to the
/// free-electron pressure the equation of state carries. The default is all of them that matter
/// at white-dwarf densities; the others reproduce earlier results of the tool.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub enum Electrostatics {
    /// The bare Fermi–Dirac electron gas (Chandrasekhar's equation of state at T = 0).
    None,
    /// The ion-sphere lattice term only (the tool's model before exchange and Thomas–Fermi were
    /// added; kept so those results can be reproduced).
    Lattice,
    /// Lattice, exchange and Thomas–Fermi terms (Salpeter 1961, as used by Hamada & Salpeter
    /// 1961); the correlation energy is left out (see [`eos`]).
    #[default]
    Salpeter,
}

/// A fully ionised mixture and the averages the EOS and opacities need (species with integer
/// A, so μ_e = 2 exactly for He, C, O).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Composition {
    /// μ_e = 1/Σ X Z/A.
    pub mu_e: f64,
    /// Z̄ = n_e/n_ion.
    pub zbar: f64,
    /// ⟨Z^{5/3}⟩/⟨Z⟩ = Σ(X Z^{5/3}/A)/Σ(X Z/A), the lattice-term factor (linear mixing).
    pub lattice_factor: f64,
    /// ⟨Z^{7/3}⟩/⟨Z⟩ = Σ(X Z^{7/3}/A)/Σ(X Z/A), the Thomas–Fermi factor (linear mixing; the
    /// correction per ion cell grows as Z^{7/3}, per electron as Z^{4/3}).
    pub thomas_fermi_factor: f64,
    /// 1 with the electron exchange term, 0 without (it depends on n_e only, not on Z).
    pub exchange_factor: f64,
    /// Σ X Z²/A (free–free opacity).
    pub z2_over_a: f64,
    /// Z_eff = Σ(X Z²/A)/Σ(X Z/A) (electron–ion collisions in conduction).
    pub z_eff: f64,
    /// Mass fraction of elements heavier than helium (bound–free opacity).
    pub metals: f64,
}

impl Composition {
    /// From (Z, A, X) triples; X are normalised to sum 1.
    pub fn new(species: &[(f64, f64, f64)]) -> Self {
        let xs: f64 = species.iter().map(|s| s.2).sum();
        let (mut ze, mut ion, mut z53, mut z73, mut z2, mut metals) =
            (0.0, 0.0, 0.0, 0.0, 0.0, 0.0);
        for &(z, a, x) in species {
            let x = x / xs;
            ze += x * z / a;
            ion += x / a;
            z53 += x * z.powf(5.0 / 3.0) / a;
            z73 += x * z.powf(7.0 / 3.0) / a;
            z2 += x * z * z / a;
            if z > 2.0 {
                metals += x;
            }
        }
        Self {
            mu_e: 1.0 / ze,
            zbar: ze / ion,
            lattice_factor: z53 / ze,
            thomas_fermi_factor: z73 / ze,
            exchange_factor: 1.0,
            z2_over_a: z2,
            z_eff: z2 / ze,
            metals,
        }
    }

    /// Pure hydrogen (Z, A) = (1, 1).
    pub fn hydrogen() -> Self {
        Self::new(&[(1.0, 1.0, 1.0)])
    }

    /// Pure helium (2, 4).
    pub fn helium() -> Self {
        Self::new(&[(2.0, 4.0, 1.0)])
    }

    /// 50:50 carbon (6, 12) and oxygen (8, 16) by mass.
    pub fn carbon_oxygen() -> Self {
        Self::new(&[(6.0, 12.0, 0.5), (8.0, 16.0, 0.5)])
    }

    /// The same matter with only the electrostatic terms `e` keeps (their factors set to 0).
    pub fn with_electrostatics(self, e: Electrostatics) -> Self {
        let (lattice, salpeter) = match e {
            Electrostatics::None => (false, false),
            Electrostatics::Lattice => (true, false),
            Electrostatics::Salpeter => (true, true),
        };
        Self {
            lattice_factor: if lattice { self.lattice_factor } else { 0.0 },
            thomas_fermi_factor: if salpeter {
                self.thomas_fermi_factor
            } else {
                0.0
            },
            exchange_factor: if salpeter { self.exchange_factor } else { 0.0 },
            ..self
        }
    }

    /// Mean molecular weight of the ideal ion + electron gas, μ = μ_e/(1 + 1/Z̄).
    pub fn mu(&self) -> f64 {
        self.mu_e / (1.0 + 1.0 / self.zbar)
    }
}

/// Why a finite-temperature (or Salpeter zero-temperature) white-dwarf model does not exist.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum HotWdError {
    /// A parameter outside its domain (non-finite mass, Teff ≤ 0, …).
    #[error("invalid parameter {name} = {value}: {why}")]
    InvalidParameter {
        /// Its name.
        name: &'static str,
        /// The value given.
        value: f64,
        /// The domain.
        why: &'static str,
    },
    /// The modified hydrostatic equation's denominator fell to ≤ 1e-9 for every trial radius
    /// that reached it: no static solution was found (spec §2).
    #[error("the structure equation's denominator vanishes (D = {d:.3e}) at r = {r_m:.6e} m")]
    DenominatorVanishes {
        /// Radius where it happened, m.
        r_m: f64,
        /// D found there.
        d: f64,
    },
    /// The central mismatch F(R) has no sign change for R between 0.98 R_cold and the end of
    /// the scan: no model (e.g. a very hot, very low-mass star with a thick hydrogen layer).
    #[error("no model: the central mismatch never changes sign up to R = {r_max_rsun:.6} R☉")]
    NoBracket {
        /// The largest trial radius, R☉.
        r_max_rsun: f64,
    },
    /// The mass is at or above the largest mass the zero-temperature model reaches.
    #[error("mass {mass_msun} M☉ is above the largest model mass {max_msun:.6} M☉")]
    AboveMaximumMass {
        /// The mass asked for.
        mass_msun: f64,
        /// The maximum.
        max_msun: f64,
    },
    /// The tabulated grid has no model at the nodes this lookup needs.
    #[error("no tabulated model near M = {mass_msun} M☉, Teff = {teff_k} K")]
    NoTabulatedModel {
        /// Mass asked for.
        mass_msun: f64,
        /// Teff asked for.
        teff_k: f64,
    },
    /// Outside the mass or Teff range of the table.
    #[error("{name} = {value} is outside the table range [{min}, {max}]")]
    OutsideTable {
        /// `mass_msun` or `teff_k`.
        name: &'static str,
        /// Value asked for.
        value: f64,
        /// Lower end.
        min: f64,
        /// Upper end.
        max: f64,
    },
    /// An integration failed for a reason the physics does not name.
    #[error("numerical failure: {0}")]
    Numerical(String),
}

impl From<TheoryError> for HotWdError {
    fn from(e: TheoryError) -> Self {
        match e {
            TheoryError::DenominatorVanishes { xi, d } => {
                HotWdError::DenominatorVanishes { r_m: xi, d }
            }
            other => HotWdError::Numerical(other.to_string()),
        }
    }
}

impl HotWdError {
    /// A short, stable tag: `invalid-parameter`, `denominator-vanishes`, `no-bracket`,
    /// `above-maximum-mass`, `no-tabulated-model`, `outside-table`, `numerical-failure`.
    pub fn code(&self) -> &'static str {
        match self {
            HotWdError::InvalidParameter { .. } => "invalid-parameter",
            HotWdError::DenominatorVanishes { .. } => "denominator-vanishes",
            HotWdError::NoBracket { .. } => "no-bracket",
            HotWdError::AboveMaximumMass { .. } => "above-maximum-mass",
            HotWdError::NoTabulatedModel { .. } => "no-tabulated-model",
            HotWdError::OutsideTable { .. } => "outside-table",
            HotWdError::Numerical(_) => "numerical-failure",
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn compositions() {
        // Definitions (spec §3.2): μ_e = 2 exactly for He, C, O and 50:50 C/O; H: μ = 1/2.
        for c in [
            Core::Helium,
            Core::CarbonOxygen,
            Core::Carbon,
            Core::Oxygen,
            Core::OxygenNeon,
        ] {
            assert!((c.composition().mu_e - 2.0).abs() < 1e-14);
        }
        assert!((Composition::hydrogen().mu() - 0.5).abs() < 1e-15);
        assert!((Composition::helium().zbar - 2.0).abs() < 1e-15);
    }

    #[test]
    fn names_round_trip() {
        for c in Core::ALL {
            assert_eq!(c.name().parse::<Core>().unwrap(), c);
        }
        for e in Envelope::ALL {
            assert_eq!(e.name().parse::<Envelope>().unwrap(), e);
        }
        assert!("neon".parse::<Core>().is_err());
        assert_eq!(Core::default_for_mass(1.2), Core::OxygenNeon);
        assert_eq!(Core::default_for_mass(0.6), Core::CarbonOxygen);
    }
}
