//! Unit strings: one parser, used by every reader's metadata and by the column map.
//!
//! The syntax follows the IVOA *Units in the VO* recommendation (VOUnits 1.0, 2014) for the
//! subset dwarfbound needs: masses, lengths, times and dimensionless numbers. Three things real
//! files carry are understood on top of the plain unit symbols:
//!
//! * SI prefixes (`km`, `kg`, `Myr`, `Gyr`, `ms`) on the units for which VOUnits allows them
//!   here: `g`, `m`, `s`, `yr`, `a` (see [`PREFIXABLE`]);
//! * a leading scale factor: a decimal number (`1.8981246e+27kg`, which is how astropy writes a
//!   Jupiter-mass column into a VOTable), a power of ten (`10**3m`, `10^3 m`) or the CDS style
//!   `10+3m` / `10-3m`, optionally a mantissa before it (`1.5 10+3m`);
//! * decadic logarithms of a mass: `log10(solMass)`, `log(solMass)` (VOUnits `log` is base 10),
//!   `dex(solMass)` (astropy) and `[solMass]` (CDS); bare `dex` is accepted for the *error* of a
//!   logarithmic mass.
//!
//! Solar, Jovian and terrestrial masses and radii are the IAU 2015 Resolution B3 nominal values
//! from [`crate::constants`]; masses go through the GM ratios, so they do not depend on G, while
//! SI masses (`kg`, `g`) are converted with M☉ = (GM)☉/G (CODATA 2018 G).
//!
//! ```
//! use dwarfbound::catalogue::units::{parse_for, Quantity};
//! let mjup = parse_for("jupiterMass", Quantity::Mass).unwrap();
//! assert!((mjup.factor_to_canonical - 9.545e-4).abs() < 1e-6); // solar masses per Jupiter mass
//! let km = parse_for("km", Quantity::Radius).unwrap();
//! assert!((km.factor_to_canonical / (1e3 / 6.957e8) - 1.0).abs() < 1e-15); // solar radii per km
//! assert!(parse_for("km", Quantity::Mass).is_err()); // wrong dimension
//! ```

use crate::constants::{
    mearth_msun, mjup_msun, msun_kg, rearth_rsun, rjup_rsun, JULIAN_YEAR_S, R_SUN_NOMINAL_M,
};

/// The physical dimension of a unit, as far as catalogues need it.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Dimension {
    /// Mass (reference unit: nominal solar mass).
    Mass,
    /// Length (reference unit: nominal solar radius).
    Length,
    /// Time (reference unit: the SI second).
    Time,
    /// Temperature (reference unit: the kelvin).
    Temperature,
    /// A pure number.
    Dimensionless,
}

impl Dimension {
    /// Lower-case name for messages ("a mass").
    pub fn noun(self) -> &'static str {
        match self {
            Dimension::Mass => "a mass",
            Dimension::Length => "a length",
            Dimension::Time => "a time",
            Dimension::Temperature => "a temperature",
            Dimension::Dimensionless => "dimensionless",
        }
    }
}

/// A parsed unit: what it measures and how to get to the canonical unit.
///
/// From [`parse`], `factor_to_canonical` goes to the dimension's reference unit (M☉, R☉, s, 1);
/// from [`parse_for`], to the canonical unit of the quantity (M☉, R☉, Gyr for ages, hours for
/// rotation periods, 1). A value `v` in this unit is `v * factor_to_canonical` canonical units,
/// or `10^v * factor_to_canonical` when `log10` is set.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Unit {
    /// What the unit measures. For bare `dex` this is [`Dimension::Dimensionless`].
    pub dimension: Dimension,
    /// Multiply a (linear) value by this to get canonical units.
    pub factor_to_canonical: f64,
    /// The file holds the decadic logarithm of the value in the inner unit.
    pub log10: bool,
}

impl Unit {
    /// Converts one value to canonical units (undoing the logarithm if there is one).
    pub fn to_canonical(&self, value: f64) -> f64 {
        if self.log10 {
            10f64.powf(value) * self.factor_to_canonical
        } else {
            value * self.factor_to_canonical
        }
    }
}

/// A catalogue quantity with its own canonical unit (the README).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    /// Masses and their errors: solar mass.
    Mass,
    /// Radii and their errors: solar radius.
    Radius,
    /// Ages and their errors: Gyr.
    Age,
    /// Rotation periods: hour.
    RotationPeriod,
    /// Effective temperatures and their errors: kelvin.
    Temperature,
    /// Pure numbers such as μ_e.
    Dimensionless,
}

impl Quantity {
    /// The dimension the quantity must have.
    pub fn dimension(self) -> Dimension {
        match self {
            Quantity::Mass => Dimension::Mass,
            Quantity::Radius => Dimension::Length,
            Quantity::Age | Quantity::RotationPeriod => Dimension::Time,
            Quantity::Temperature => Dimension::Temperature,
            Quantity::Dimensionless => Dimension::Dimensionless,
        }
    }

    /// The canonical unit as a VOUnits string.
    pub fn canonical_unit(self) -> &'static str {
        match self {
            Quantity::Mass => "solMass",
            Quantity::Radius => "solRad",
            Quantity::Age => "Gyr",
            Quantity::RotationPeriod => "h",
            Quantity::Temperature => "K",
            Quantity::Dimensionless => "",
        }
    }

    /// Size of the canonical unit in the dimension's reference unit (M☉, R☉, s, 1).
    fn canonical_in_reference(self) -> f64 {
        match self {
            Quantity::Age => 1e9 * JULIAN_YEAR_S,
            Quantity::RotationPeriod => 3600.0,
            _ => 1.0,
        }
    }
}

/// Why a unit string was refused (the caller adds file and column).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{0}")]
pub struct UnitError(pub String);

/// Units whose symbols take SI prefixes here (VOUnits 1.0 allows prefixes on these; prefixes on
/// `solMass` and friends are not used in practice and are refused to keep the grammar small).
pub const PREFIXABLE: [&str; 6] = ["g", "m", "s", "yr", "a", "K"];

/// SI prefixes allowed by VOUnits 1.0, with their factors. `da` is matched before `d`.
const PREFIXES: [(&str, f64); 20] = [
    ("da", 1e1),
    ("y", 1e-24),
    ("z", 1e-21),
    ("a", 1e-18),
    ("f", 1e-15),
    ("p", 1e-12),
    ("n", 1e-9),
    ("u", 1e-6),
    ("m", 1e-3),
    ("c", 1e-2),
    ("d", 1e-1),
    ("h", 1e2),
    ("k", 1e3),
    ("M", 1e6),
    ("G", 1e9),
    ("T", 1e12),
    ("P", 1e15),
    ("E", 1e18),
    ("Z", 1e21),
    ("Y", 1e24),
];

/// A unit symbol of the supported subset: its dimension and size in the reference unit.
fn base_unit(symbol: &str) -> Option<(Dimension, f64)> {
    let msun_per_kg = 1.0 / msun_kg();
    Some(match symbol {
        "solMass" => (Dimension::Mass, 1.0),
        "jupiterMass" => (Dimension::Mass, mjup_msun()),
        "earthMass" => (Dimension::Mass, mearth_msun()),
        "g" => (Dimension::Mass, 1e-3 * msun_per_kg),
        "solRad" => (Dimension::Length, 1.0),
        "jupiterRad" => (Dimension::Length, rjup_rsun()),
        "earthRad" => (Dimension::Length, rearth_rsun()),
        "m" => (Dimension::Length, 1.0 / R_SUN_NOMINAL_M),
        "s" => (Dimension::Time, 1.0),
        "min" => (Dimension::Time, 60.0),
        "h" => (Dimension::Time, 3600.0),
        "d" => (Dimension::Time, 86_400.0),
        "yr" | "a" => (Dimension::Time, JULIAN_YEAR_S),
        "K" => (Dimension::Temperature, 1.0),
        _ => return None,
    })
}

/// Common non-VOUnits spellings, to point the user at the right symbol.
fn hint(symbol: &str) -> Option<&'static str> {
    Some(match symbol {
        "Msun" | "M_sun" | "Msol" | "MSun" | "M_Sun" | "solmass" => "solMass",
        "Mjup" | "M_jup" | "MJup" | "M_J" | "Mj" | "jupitermass" => "jupiterMass",
        "Mearth" | "M_earth" | "MEarth" | "Mgeo" | "earthmass" => "earthMass",
        "Rsun" | "R_sun" | "Rsol" | "RSun" | "solrad" => "solRad",
        "Rjup" | "R_jup" | "RJup" | "R_J" | "jupiterrad" => "jupiterRad",
        "Rearth" | "R_earth" | "REarth" => "earthRad",
        "hr" | "hour" | "hours" => "h",
        "day" | "days" => "d",
        "year" | "years" | "y" => "yr",
        "sec" => "s",
        "kelvin" | "Kelvin" | "k" => "K",
        _ => return None,
    })
}

/// Symbols that a prefix split would misread (pascal is not peta-annum).
const NOT_PREFIXED: [&str; 1] = ["Pa"];

/// Parses a single unit symbol, possibly prefixed.
fn parse_symbol(symbol: &str) -> Result<(Dimension, f64), UnitError> {
    if let Some(b) = base_unit(symbol) {
        return Ok(b);
    }
    if !NOT_PREFIXED.contains(&symbol) {
        for (prefix, factor) in PREFIXES {
            if let Some(rest) = symbol.strip_prefix(prefix) {
                if PREFIXABLE.contains(&rest) {
                    if let Some((dim, size)) = base_unit(rest) {
                        return Ok((dim, factor * size));
                    }
                }
            }
        }
    }
    let mut msg = format!("`{symbol}` is not a supported VOUnits unit");
    if let Some(h) = hint(symbol) {
        msg.push_str(&format!(" (write `{h}`)"));
    } else {
        msg.push_str(" (supported: solMass, jupiterMass, earthMass, g, solRad, jupiterRad, earthRad, m, s, min, h, d, yr, a, K, with SI prefixes on g, m, s, yr, a, K)");
    }
    Err(UnitError(msg))
}

/// Reads a leading unsigned decimal number (`1`, `1.5`, `.5`, `1e3`, `1.8981246e+27`);
/// returns its text length. An `e` only counts as an exponent when digits follow, so that
/// `1earthMass` is one Earth mass.
fn leading_number(s: &str) -> usize {
    let b = s.as_bytes();
    let mut i = 0;
    while i < b.len() && b[i].is_ascii_digit() {
        i += 1;
    }
    if i < b.len() && b[i] == b'.' {
        i += 1;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
    }
    let mantissa_digits = s[..i].chars().any(|c| c.is_ascii_digit());
    if !mantissa_digits {
        return 0;
    }
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        let mut j = i + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        let start = j;
        while j < b.len() && b[j].is_ascii_digit() {
            j += 1;
        }
        if j > start {
            i = j;
        }
    }
    i
}

/// Reads a leading signed integer exponent; returns (value, length).
fn leading_int(s: &str) -> Option<(i32, usize)> {
    let b = s.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    let start = i;
    while i < b.len() && b[i].is_ascii_digit() {
        i += 1;
    }
    if i == start {
        return None;
    }
    s[..i].parse().ok().map(|v| (v, i))
}

/// Reads a power of ten written `10**N`, `10^N`, `10+N` or `10-N` at the start of `s`.
fn power_of_ten(s: &str) -> Option<(f64, usize)> {
    let rest = s.strip_prefix("10")?;
    let (op_len, signed) = if rest.starts_with("**") {
        (2, true)
    } else if rest.starts_with('^') {
        (1, true)
    } else if rest.starts_with('+') || rest.starts_with('-') {
        (0, true)
    } else {
        (0, false)
    };
    if !signed {
        return None;
    }
    let (exp, len) = leading_int(&rest[op_len..])?;
    Some((10f64.powi(exp), 2 + op_len + len))
}

/// Splits an optional scale factor off the front of a linear unit string.
fn split_scale(s: &str) -> Result<(f64, &str), UnitError> {
    let mut scale = 1.0;
    let mut rest = s.trim_start();
    // Mantissa (or the whole factor) as a decimal number, unless it is a power of ten.
    if power_of_ten(rest).is_none() {
        let n = leading_number(rest);
        if n > 0 {
            let v: f64 = rest[..n]
                .parse()
                .map_err(|_| UnitError(format!("bad scale factor in `{s}`")))?;
            scale *= v;
            rest = rest[n..].trim_start();
        }
    }
    if let Some((p, n)) = power_of_ten(rest) {
        scale *= p;
        rest = rest[n..].trim_start();
    }
    if !(scale.is_finite() && scale > 0.0) {
        return Err(UnitError(format!(
            "scale factor in `{s}` must be a positive finite number"
        )));
    }
    Ok((scale, rest))
}

/// Parses a linear unit: optional scale factor, then one (possibly prefixed) symbol, or nothing
/// for a dimensionless number.
fn parse_linear(s: &str) -> Result<(Dimension, f64), UnitError> {
    let (scale, rest) = split_scale(s)?;
    let rest = rest.trim();
    if rest.is_empty() {
        return Ok((Dimension::Dimensionless, scale));
    }
    if rest.contains(|c: char| c.is_whitespace() || "./*^()[]".contains(c)) {
        return Err(UnitError(format!(
            "`{s}` is a compound unit; only a single unit with an optional scale factor is supported"
        )));
    }
    let (dim, size) = parse_symbol(rest)?;
    Ok((dim, scale * size))
}

/// Parses a unit string. `factor_to_canonical` goes to the dimension's reference unit
/// (M☉, R☉, second, 1). An empty string is a dimensionless number.
pub fn parse(s: &str) -> Result<Unit, UnitError> {
    let t = s.trim();
    if t == "dex" {
        return Ok(Unit {
            dimension: Dimension::Dimensionless,
            factor_to_canonical: 1.0,
            log10: true,
        });
    }
    let inner = ["log10(", "log(", "dex("]
        .iter()
        .find_map(|f| t.strip_prefix(f).and_then(|r| r.strip_suffix(')')))
        .or_else(|| t.strip_prefix('[').and_then(|r| r.strip_suffix(']')));
    if let Some(inner) = inner {
        let (dimension, factor) = parse_linear(inner)?;
        if dimension == Dimension::Dimensionless {
            return Err(UnitError(format!(
                "`{s}`: the logarithm of a pure number is not supported"
            )));
        }
        return Ok(Unit {
            dimension,
            factor_to_canonical: factor,
            log10: true,
        });
    }
    if t.starts_with("ln(") || t.starts_with("exp(") || t.starts_with("sqrt(") {
        return Err(UnitError(format!(
            "`{s}`: only decadic logarithms (log10, log, dex, [..]) are supported"
        )));
    }
    let (dimension, factor) = parse_linear(t)?;
    Ok(Unit {
        dimension,
        factor_to_canonical: factor,
        log10: false,
    })
}

/// Parses a unit string for a quantity: checks the dimension, allows logarithms only for masses,
/// and returns `factor_to_canonical` to the quantity's canonical unit (M☉, R☉, Gyr, h, 1).
pub fn parse_for(s: &str, quantity: Quantity) -> Result<Unit, UnitError> {
    let u = parse(s)?;
    let is_bare_dex = u.log10 && u.dimension == Dimension::Dimensionless;
    if is_bare_dex {
        return Err(UnitError(format!(
            "bare `dex` does not say of what; write e.g. `log10({})`",
            if quantity == Quantity::Mass {
                "solMass"
            } else {
                quantity.canonical_unit()
            }
        )));
    }
    if u.dimension != quantity.dimension() {
        return Err(UnitError(format!(
            "`{}` is {}, but the column needs {}",
            s.trim(),
            u.dimension.noun(),
            quantity.dimension().noun()
        )));
    }
    if u.log10 && quantity != Quantity::Mass {
        return Err(UnitError(format!(
            "`{}`: logarithmic units are supported for masses only",
            s.trim()
        )));
    }
    Ok(Unit {
        factor_to_canonical: u.factor_to_canonical / quantity.canonical_in_reference(),
        ..u
    })
}

/// Parses the unit of an *error* column: like [`parse_for`], but bare `dex` is also accepted
/// for the error of a mass (an error in dex needs no inner unit).
pub fn parse_error_unit(s: &str, quantity: Quantity) -> Result<Unit, UnitError> {
    if quantity == Quantity::Mass && s.trim() == "dex" {
        return parse(s);
    }
    parse_for(s, quantity)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    // IAU 2015 Resolution B3 nominal values, as printed in the resolution:
    // (GM)☉ = 1.3271244e20 m³ s⁻², (GM)_J = 1.2668653e17, (GM)_E = 3.986004e14,
    // R☉ = 6.957e8 m, R_J(eq) = 7.1492e7 m, R_E(eq) = 6.3781e6 m.
    #[test]
    fn jupiter_earth_solar_mass_ratios_match_iau_2015_b3() {
        let mj = parse_for("jupiterMass", Quantity::Mass).unwrap();
        assert!(rel(mj.factor_to_canonical, 1.266_865_3e17 / 1.327_124_4e20) < 1e-15);
        // M☉/M_J = 1047.5655… (derived from the resolution's two GM values).
        assert!(rel(1.0 / mj.factor_to_canonical, 1_047.565_5) < 1e-7);
        let me = parse_for("earthMass", Quantity::Mass).unwrap();
        assert!(rel(me.factor_to_canonical, 3.986_004e14 / 1.327_124_4e20) < 1e-15);
        // M☉/M_E = 332 946.08… (derived from the resolution's two GM values).
        assert!(rel(1.0 / me.factor_to_canonical, 332_946.08) < 1e-7);
        let ms = parse_for("solMass", Quantity::Mass).unwrap();
        assert_eq!(ms.factor_to_canonical, 1.0);
    }

    #[test]
    fn radii_match_iau_2015_b3() {
        let rj = parse_for("jupiterRad", Quantity::Radius).unwrap();
        assert!(rel(rj.factor_to_canonical, 7.1492e7 / 6.957e8) < 1e-15);
        let re = parse_for("earthRad", Quantity::Radius).unwrap();
        assert!(rel(re.factor_to_canonical, 6.3781e6 / 6.957e8) < 1e-15);
        let m = parse_for("m", Quantity::Radius).unwrap();
        assert!(rel(m.factor_to_canonical, 1.0 / 6.957e8) < 1e-15);
    }

    #[test]
    fn si_masses_use_codata_2018_g() {
        // M☉ = (GM)☉ / G = 1.3271244e20 / 6.67430e-11 kg (IAU 2015 B3 with CODATA 2018 G);
        // astropy 8.0.2 `astropy.constants.M_sun` prints 1.988409870698051e+30 kg.
        let kg = parse_for("kg", Quantity::Mass).unwrap();
        assert!(rel(1.0 / kg.factor_to_canonical, 1.988_409_870_698_051e30) < 1e-12);
        let g = parse_for("g", Quantity::Mass).unwrap();
        assert!(rel(g.factor_to_canonical * 1e3, kg.factor_to_canonical) < 1e-15);
    }

    #[test]
    fn astropy_scaled_jupiter_mass_is_understood() {
        // astropy 8.0.2: `u.M_jup.to_string('vounit')` is `1.8981246e+27kg` (M_jup = (GM)_J / G
        // rounded to 8 digits); it must land within that rounding of one Jupiter mass. Older
        // astropy wrote the CDS-style `1.8981246 10+27kg`.
        let u = parse_for("1.8981246e+27kg", Quantity::Mass).unwrap();
        assert!(rel(u.factor_to_canonical, mjup_msun()) < 1e-7);
        // astropy 8.0.2: `u.R_jup.to_string('vounit')` is `71492000m` (IAU 2015 B3 R_J eq).
        let rj = parse_for("71492000m", Quantity::Radius).unwrap();
        assert!(rel(rj.factor_to_canonical, rjup_rsun()) < 1e-15);
        let old_style = parse_for("1.8981246 10+27kg", Quantity::Mass).unwrap();
        assert!(rel(old_style.factor_to_canonical, u.factor_to_canonical) < 1e-15);
    }

    #[test]
    fn prefixes_and_scale_factors() {
        let km = parse_for("km", Quantity::Radius)
            .unwrap()
            .factor_to_canonical;
        assert!(rel(km, 1e3 / 6.957e8) < 1e-15);
        let cm = parse_for("cm", Quantity::Radius)
            .unwrap()
            .factor_to_canonical;
        assert!(rel(cm, 1e-2 / 6.957e8) < 1e-15);
        for s in ["10+3m", "10**3m", "10^3 m", "1e3 m", "1000m", "10**+3 m"] {
            let f = parse_for(s, Quantity::Radius).unwrap().factor_to_canonical;
            assert!(rel(f, km) < 1e-15, "{s}");
        }
        let mm = parse_for("10-3m", Quantity::Radius)
            .unwrap()
            .factor_to_canonical;
        assert!(rel(mm, 1e-3 / 6.957e8) < 1e-15);
        // Julian year of 365.25 d (IAU convention): 1 Gyr is exactly one canonical age unit.
        assert_eq!(
            parse_for("Gyr", Quantity::Age).unwrap().factor_to_canonical,
            1.0
        );
        assert_eq!(
            parse_for("Myr", Quantity::Age).unwrap().factor_to_canonical,
            1e-3
        );
        assert_eq!(
            parse_for("Ga", Quantity::Age).unwrap().factor_to_canonical,
            1.0
        );
        assert!(
            rel(
                parse_for("yr", Quantity::Age).unwrap().factor_to_canonical,
                1e-9
            ) < 1e-15
        );
        assert_eq!(
            parse_for("h", Quantity::RotationPeriod)
                .unwrap()
                .factor_to_canonical,
            1.0
        );
        assert_eq!(
            parse_for("d", Quantity::RotationPeriod)
                .unwrap()
                .factor_to_canonical,
            24.0
        );
        assert_eq!(
            parse_for("min", Quantity::RotationPeriod)
                .unwrap()
                .factor_to_canonical,
            1.0 / 60.0
        );
        assert_eq!(
            parse_for("ks", Quantity::RotationPeriod)
                .unwrap()
                .factor_to_canonical,
            1000.0 / 3600.0
        );
        // `1earthMass` is one Earth mass, not 1e(arthMass).
        let e = parse_for("1earthMass", Quantity::Mass).unwrap();
        assert_eq!(e.factor_to_canonical, mearth_msun());
    }

    #[test]
    fn log_forms_for_mass() {
        for s in [
            "log10(solMass)",
            "log(solMass)",
            "[solMass]",
            "dex(solMass)",
        ] {
            let u = parse_for(s, Quantity::Mass).unwrap();
            assert!(u.log10, "{s}");
            assert_eq!(u.factor_to_canonical, 1.0);
            assert!(rel(u.to_canonical(-1.0), 0.1) < 1e-15);
        }
        let uj = parse_for("log10(jupiterMass)", Quantity::Mass).unwrap();
        assert!(rel(uj.to_canonical(1.0), 10.0 * mjup_msun()) < 1e-15);
        assert!(parse_for("log10(Gyr)", Quantity::Age).is_err());
        assert!(parse_for("dex", Quantity::Mass).is_err());
        assert!(parse_error_unit("dex", Quantity::Mass).unwrap().log10);
        assert!(parse_error_unit("dex", Quantity::Radius).is_err());
    }

    #[test]
    fn refusals_name_the_problem() {
        let e = parse_for("km", Quantity::Mass).unwrap_err();
        assert!(e.0.contains("a length") && e.0.contains("a mass"), "{e}");
        let e = parse_for("Mjup", Quantity::Mass).unwrap_err();
        assert!(e.0.contains("jupiterMass"), "{e}");
        for bad in [
            "furlong",
            "solMass/yr",
            "m.s",
            "ksolMass",
            "Pa",
            "0kg",
            "-1kg",
            "ln(solMass)",
            "log10()",
            "[]",
            "kg kg",
        ] {
            assert!(parse_for(bad, Quantity::Mass).is_err(), "{bad}");
        }
        assert!(parse_for("", Quantity::Dimensionless).is_ok());
        assert!(parse_for("", Quantity::Mass).is_err());
        assert!(parse_for("h", Quantity::Age).is_ok());
    }
}
