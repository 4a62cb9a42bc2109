//! Vetting: raw tables in, canonical objects and quarantined rows out.
//!
//! Every data row ends up either as a [`CatalogueObject`] in canonical units (M☉, R☉, Gyr, h) or
//! as exactly one [`QuarantinedRow`] naming the first column that fails, in the order of the
//! table below. Rows in = accepted + quarantined, checked in code for every catalogue.
//! Whole-file problems (missing column, bad unit, …) are a [`CatalogueError`] instead.
//!
//! ```
//! use dwarfbound::catalogue::table::{Cell, ColumnMeta, RawRow, RawTable};
//! use dwarfbound::catalogue::vet::vet_table;
//! let col = |n: &str| ColumnMeta { name: n.into(), ..Default::default() };
//! let t = |s: &str| Cell::Text(s.into());
//! let table = RawTable {
//!     columns: vec![col("id"), col("class"), col("mass"), col("mass_err")],
//!     rows: vec![
//!         RawRow { row_number: 1, cells: vec![t("A"), t("white_dwarf"), t("0.6"), t("0.02")] },
//!         RawRow { row_number: 2, cells: vec![t("B"), t("white_dwarf"), t("2.6"), t("0.02")] },
//!     ],
//!     malformed: vec![],
//! };
//! let (objects, quarantine, tally) = vet_table("demo.csv", &table, None).unwrap();
//! assert_eq!((objects.len(), quarantine.len(), tally.rows_in), (1, 1, 2));
//! assert_eq!(quarantine[0].reason, "above 2.0 Msun, implausible for a white_dwarf");
//! ```
//!
//! # Quarantine reasons
//!
//! Checks run in this order; the first failure is the row's one quarantine entry. The `column`
//! of the entry is the column's name *in the file* (after the column map, the user can find it).
//!
//! | column | reason | when |
//! |---|---|---|
//! | `(row)` | `malformed row: …` (the reader's words, e.g. `expected 6 fields, found 5`) | the reader could only partly parse the row |
//! | `(row)` | `row number beyond 4 294 967 295 (split the catalogue into several files)` | a data row past the 32-bit row numbers objects carry |
//! | id | `missing id` | empty id |
//! | id | `missing id` | an id made only of invisible characters (see below) |
//! | id | `duplicate id within catalogue` | an earlier row of the same file has this id (the first one is kept) |
//! | id | `id collides with another row's after Unicode normalisation (both quarantined)` | two rows whose ids differ only by normalisation form or invisible characters: neither can be trusted to be the object the other is not |
//! | class | `missing class` | empty class |
//! | class | `unknown class label` | neither canonical nor in the map's `[classes]` |
//! | mass_limit | `unknown mass_limit value (expected empty, upper or lower)` | anything else |
//! | mass | `missing mass` | empty mass |
//! | any number | `not a number` | text that does not parse as a decimal number |
//! | any number | `not finite` | NaN or ±infinity (also after unit conversion); NaN in an optional column (radius, age, rotation period, μe and their errors) is a missing value instead, as in FITS and VOTable |
//! | mass | `not positive` | mass ≤ 0 in a linear unit |
//! | mass_err (or mass_err_lo) | `missing mass error` | no error although `mass_limit` is empty |
//! | mass_err_lo / mass_err_hi | `only one of mass_err_lo and mass_err_hi given` | a split error with one side empty |
//! | mass_err | `both mass_err and mass_err_lo/mass_err_hi given (ambiguous)` | a row fills the symmetric and the split error: which one the author meant is a guess, so the row is quarantined (a file may carry both columns, each row filling one) |
//! | mass_err, mass_err_lo, mass_err_hi | `not positive` | error ≤ 0 (also when given with a limit) |
//! | radius, radius_err, age, age_err, rotation_period, rotation_period_err | `not positive` | value ≤ 0 |
//! | mu_e | `mu_e outside [1, 3]` | μ_e < 1 or > 3 |
//! | teff, teff_err, radius_model | `not positive` | value ≤ 0 |
//! | core | `unknown core (expected he, co or one)` | anything else (any case; `c/o`, `o/ne` accepted) |
//! | envelope | `unknown envelope (expected thick or thin)` | anything else |
//! | mass_method | `unknown mass_method (expected dynamical, redshift or model)` | anything else (empty is unknown) |
//! | mass | `above 0.2 Msun, implausible for a brown_dwarf` | see thresholds |
//! | mass | `above 1.0 Msun, implausible for the hburning sample` | see thresholds |
//! | mass | `above 2.0 Msun, implausible for a white_dwarf` | see thresholds |
//! | mass | `below 0.1 Msun, implausible for a white_dwarf` | see thresholds |
//!
//! # Identifiers
//!
//! Ids are compared, and written to `accepted.csv`, after Unicode normalisation (NFC) with
//! invisible characters removed — control characters (NUL included), format characters
//! (zero-width space and joiners, the BOM, bidirectional marks, soft hyphen) and other default-
//! ignorable code points — and surrounding white space trimmed: `Gl 229B`, `Gl\u{200B} 229B`
//! and a decomposed `é` are the same id to a human reader, so they must be to dwarfbound.
//!
//! # Plausibility thresholds (choices, not physics results)
//!
//! They catch unit mix-ups (Jupiter masses read as solar masses) and mislabelled classes, not
//! physics: they are far outside any bound the theory can move.
//! * `brown_dwarf` above 0.2 M☉: well above any hydrogen-burning limit (~0.07–0.08 M☉ in
//!   standard gravity), so the label or the unit is wrong. No lower threshold: planetary-mass
//!   objects are brown dwarfs for our purpose.
//! * `hburning` above 1.0 M☉: dwarfbound tests very-low-mass stars; a solar-type star in such a
//!   sample is almost surely a unit error. No lower threshold: a burning star below the
//!   standard minimum mass is exactly the tension the tool looks for.
//! * `white_dwarf` above 2.0 M☉ (beyond any Chandrasekhar-type limit the grid explores) or
//!   below 0.1 M☉ (below any white dwarf a Hubble time can make).
//!
//! An upper limit is only checked against the lower threshold and a lower limit only against
//! the upper ones, since only those can make the object implausible.
//!
//! # Units and errors
//!
//! A column's unit is, in order: the map's `[units]`, the file's own metadata (a blank unit
//! counts as none), for an error
//! column the unit of its value column (an error without its own unit is in the unit of the
//! value, as in every catalogue we know), else the canonical default. An error on a
//! logarithmic mass (`log10(solMass)`, `[solMass]`, `dex`) is converted to first order,
//! σ_M = M ln(10) σ_log (the usual delta-method propagation, applied to each side of a split
//! error); for σ_log = 0.1 dex this understates the upper side of the exact interval
//! 10^(±σ) by about 11 %.

use std::borrow::Cow;
use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::colmap::{column_quantity, ColumnMap};
use super::error::CatalogueError;
use super::opt_f64::OptF64;
use super::table::{read_table_columns, CellRef, ColumnMeta, Format, RawTable, ReadOptions};
use super::units::{self, Unit};

/// Which kind of object a row describes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ObjectClass {
    /// A star that burns hydrogen.
    #[serde(rename = "hburning")]
    HBurning,
    /// A confirmed non-burning object.
    BrownDwarf,
    /// A white dwarf.
    WhiteDwarf,
}

impl ObjectClass {
    /// The canonical label (`hburning`, `brown_dwarf`, `white_dwarf`).
    pub fn label(self) -> &'static str {
        match self {
            ObjectClass::HBurning => "hburning",
            ObjectClass::BrownDwarf => "brown_dwarf",
            ObjectClass::WhiteDwarf => "white_dwarf",
        }
    }

    /// Parses a canonical label.
    pub fn from_label(label: &str) -> Option<ObjectClass> {
        match label {
            "hburning" => Some(ObjectClass::HBurning),
            "brown_dwarf" => Some(ObjectClass::BrownDwarf),
            "white_dwarf" => Some(ObjectClass::WhiteDwarf),
            _ => None,
        }
    }

    /// All classes, in label order of the summary.
    pub const ALL: [ObjectClass; 3] = [
        ObjectClass::HBurning,
        ObjectClass::BrownDwarf,
        ObjectClass::WhiteDwarf,
    ];
}

/// Whether `mass` is a measurement or a limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum MassLimit {
    /// A measurement with errors.
    None,
    /// The true mass is at most `mass`.
    Upper,
    /// The true mass is at least `mass`.
    Lower,
}

impl MassLimit {
    /// The label of `accepted.csv` (empty, `upper`, `lower`).
    pub fn label(self) -> &'static str {
        match self {
            MassLimit::None => "",
            MassLimit::Upper => "upper",
            MassLimit::Lower => "lower",
        }
    }
}

/// White-dwarf core composition as a catalogue states it (`core` column).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum CoreLabel {
    /// Helium core (`he`).
    He,
    /// Carbon–oxygen core (`co`).
    Co,
    /// Oxygen–neon core (`one`).
    One,
}

impl CoreLabel {
    /// The label as written in catalogues and outputs.
    pub fn label(self) -> &'static str {
        match self {
            CoreLabel::He => "he",
            CoreLabel::Co => "co",
            CoreLabel::One => "one",
        }
    }

    /// Parses `he`, `co` or `one` (any case; `c/o` and `o/ne` too).
    pub fn from_label(text: &str) -> Option<CoreLabel> {
        match text.trim().to_ascii_lowercase().as_str() {
            "he" => Some(CoreLabel::He),
            "co" | "c/o" => Some(CoreLabel::Co),
            "one" | "o/ne" => Some(CoreLabel::One),
            _ => None,
        }
    }
}

/// Thickness of a white dwarf's hydrogen layer (`envelope` column).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum EnvelopeLabel {
    /// Thick hydrogen layer (M_H/M ≈ 1e-4, the usual DA white dwarf).
    Thick,
    /// Thin hydrogen layer (M_H/M ≈ 1e-10, nearly bare helium).
    Thin,
}

impl EnvelopeLabel {
    /// The label as written in catalogues and outputs.
    pub fn label(self) -> &'static str {
        match self {
            EnvelopeLabel::Thick => "thick",
            EnvelopeLabel::Thin => "thin",
        }
    }

    /// Parses `thick` or `thin` (any case).
    pub fn from_label(text: &str) -> Option<EnvelopeLabel> {
        match text.trim().to_ascii_lowercase().as_str() {
            "thick" => Some(EnvelopeLabel::Thick),
            "thin" => Some(EnvelopeLabel::Thin),
            _ => None,
        }
    }
}

/// Where a mass came from (`mass_method` column). A mass obtained through a standard-gravity
/// model is circular for a test of that model, so the confrontation treats it apart.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum MassMethod {
    /// Not stated.
    #[default]
    Unknown,
    /// Orbits, eclipses, timing or lensing: independent of any structure model.
    Dynamical,
    /// Gravitational redshift combined with a measured radius.
    Redshift,
    /// Through a mass–radius relation, spectroscopic log g, photometry or evolutionary tracks.
    Model,
}

impl MassMethod {
    /// The label as written in catalogues and outputs (empty for unknown).
    pub fn label(self) -> &'static str {
        match self {
            MassMethod::Unknown => "",
            MassMethod::Dynamical => "dynamical",
            MassMethod::Redshift => "redshift",
            MassMethod::Model => "model",
        }
    }

    /// Parses `dynamical`, `redshift` or `model` (any case); empty is unknown.
    pub fn from_label(text: &str) -> Option<MassMethod> {
        match text.trim().to_ascii_lowercase().as_str() {
            "" | "unknown" => Some(MassMethod::Unknown),
            "dynamical" => Some(MassMethod::Dynamical),
            "redshift" => Some(MassMethod::Redshift),
            "model" => Some(MassMethod::Model),
            _ => None,
        }
    }
}

/// One accepted object in canonical units.
///
/// A catalogue may hold millions, all in memory until the outputs are written, so the layout
/// is compact (80 bytes; it was 160, and 272 before that): what every test reads (id, class,
/// mass and its errors, the limit, the mass method, the source) is inline, and the columns a
/// large catalogue rarely fills sit in one boxed [`ObjectDetails`], allocated only for a row
/// that has at least one of them. Read those through the accessors (`radius_rsun()`, …). The
/// id is an [`ObjectId`], inline up to 24 bytes (no allocation for an ordinary id).
///
/// ```
/// use dwarfbound::catalogue::{CatalogueObject, MassLimit, ObjectClass, ObjectDetails, OptF64};
/// let wd = CatalogueObject {
///     id: "WD 0001".into(), class: ObjectClass::WhiteDwarf, mass_msun: 0.6,
///     mass_err_lo_msun: OptF64::some(0.02), mass_err_hi_msun: OptF64::some(0.02),
///     mass_limit: MassLimit::None, mass_method: Default::default(),
///     details: ObjectDetails { radius_rsun: OptF64::some(0.0125), ..Default::default() }.into(),
///     source_file: "invented.csv".into(), source_row: 1,
/// };
/// assert_eq!(wd.radius_rsun().get(), Some(0.0125));
/// assert_eq!(wd.age_gyr().get(), None);
/// ```
#[derive(Debug, Clone, PartialEq)]
pub struct CatalogueObject {
    /// Identifier, unique within its catalogue.
    pub id: ObjectId,
    /// Class after the column map's relabelling.
    pub class: ObjectClass,
    /// Best mass estimate (or the limit), M☉.
    pub mass_msun: f64,
    /// 1σ error below the mass, M☉ (equal to the upper one for a symmetric error).
    pub mass_err_lo_msun: OptF64,
    /// 1σ error above the mass, M☉.
    pub mass_err_hi_msun: OptF64,
    /// Whether the mass is a limit.
    pub mass_limit: MassLimit,
    /// Where the mass came from.
    pub mass_method: MassMethod,
    /// The optional columns other than the mass errors (radius, age, spin, μe, Teff, core,
    /// envelope, model radius, reference); empty, and no allocation, when none is given.
    pub details: Details,
    /// The catalogue file as given on the command line.
    pub source_file: SourceFile,
    /// 1-based data row in that file (32 bits: 8 bytes less per object of a large catalogue;
    /// a row beyond 4 294 967 295 is quarantined).
    pub source_row: u32,
}

/// An object's identifier: a string stored inline up to 24 bytes (`compact_str`), so that the
/// ids of a million objects are not a million allocations; it reads as a `&str`.
pub type ObjectId = compact_str::CompactString;

/// The optional columns of an object that large catalogues rarely fill, held apart from
/// [`CatalogueObject`] (see [`Details`]). Missing numbers are [`OptF64::NONE`].
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ObjectDetails {
    /// Radius, R☉.
    pub radius_rsun: OptF64,
    /// 1σ radius error, R☉.
    pub radius_err_rsun: OptF64,
    /// Age, Gyr.
    pub age_gyr: OptF64,
    /// 1σ age error, Gyr.
    pub age_err_gyr: OptF64,
    /// Rotation period, h.
    pub rotation_period_h: OptF64,
    /// 1σ rotation-period error, h (the spin test adds it to the break-up floor in quadrature).
    pub rotation_period_err_h: OptF64,
    /// Mean molecular weight per electron, if given (consumers default to 2).
    pub mu_e: OptF64,
    /// Effective temperature, K.
    pub teff_k: OptF64,
    /// 1σ effective-temperature error, K.
    pub teff_err_k: OptF64,
    /// White-dwarf core composition, if stated (consumers default by mass).
    pub core: Option<CoreLabel>,
    /// White-dwarf hydrogen layer, if stated (consumers default to thick).
    pub envelope: Option<EnvelopeLabel>,
    /// The user's own standard-gravity model radius, R☉ (anchors the radius test).
    pub radius_model_rsun: OptF64,
    /// Free-text reference.
    pub reference: Option<Box<str>>,
}

impl ObjectDetails {
    /// Nothing given: what an object without a side record reads as.
    pub const NONE: ObjectDetails = ObjectDetails {
        radius_rsun: OptF64::NONE,
        radius_err_rsun: OptF64::NONE,
        age_gyr: OptF64::NONE,
        age_err_gyr: OptF64::NONE,
        rotation_period_h: OptF64::NONE,
        rotation_period_err_h: OptF64::NONE,
        mu_e: OptF64::NONE,
        teff_k: OptF64::NONE,
        teff_err_k: OptF64::NONE,
        core: None,
        envelope: None,
        radius_model_rsun: OptF64::NONE,
        reference: None,
    };

    /// Whether no column is given (such a record is not allocated).
    pub fn is_empty(&self) -> bool {
        let numbers = [
            self.radius_rsun,
            self.radius_err_rsun,
            self.age_gyr,
            self.age_err_gyr,
            self.rotation_period_h,
            self.rotation_period_err_h,
            self.mu_e,
            self.teff_k,
            self.teff_err_k,
            self.radius_model_rsun,
        ];
        numbers.iter().all(|v| v.is_none())
            && self.core.is_none()
            && self.envelope.is_none()
            && self.reference.is_none()
    }
}

/// An object's [`ObjectDetails`], boxed only when one of them is given: the scale catalogues
/// of issue 12 have none, and the record inline would double the object. Reads as the record
/// (all missing when absent); two `Details` are equal when their records are.
#[derive(Clone, Default)]
pub struct Details(Option<Box<ObjectDetails>>);

/// What an object without a side record reads as.
static NO_DETAILS: ObjectDetails = ObjectDetails::NONE;

impl Details {
    /// The record for writing, allocated on first use.
    pub fn make_mut(&mut self) -> &mut ObjectDetails {
        self.0.get_or_insert_with(Default::default)
    }

    /// Whether a record is allocated (a test of the layout, not of content).
    pub fn is_allocated(&self) -> bool {
        self.0.is_some()
    }
}

impl From<ObjectDetails> for Details {
    /// Boxes the record unless it is empty.
    fn from(d: ObjectDetails) -> Self {
        Details((!d.is_empty()).then(|| Box::new(d)))
    }
}

impl std::ops::Deref for Details {
    type Target = ObjectDetails;
    fn deref(&self) -> &ObjectDetails {
        self.0.as_deref().unwrap_or(&NO_DETAILS)
    }
}

impl PartialEq for Details {
    fn eq(&self, other: &Self) -> bool {
        **self == **other
    }
}

impl std::fmt::Debug for Details {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        (**self).fmt(f)
    }
}

impl CatalogueObject {
    /// Radius, R☉.
    pub fn radius_rsun(&self) -> OptF64 {
        self.details.radius_rsun
    }
    /// 1σ radius error, R☉.
    pub fn radius_err_rsun(&self) -> OptF64 {
        self.details.radius_err_rsun
    }
    /// Age, Gyr.
    pub fn age_gyr(&self) -> OptF64 {
        self.details.age_gyr
    }
    /// 1σ age error, Gyr.
    pub fn age_err_gyr(&self) -> OptF64 {
        self.details.age_err_gyr
    }
    /// Rotation period, h.
    pub fn rotation_period_h(&self) -> OptF64 {
        self.details.rotation_period_h
    }
    /// 1σ rotation-period error, h.
    pub fn rotation_period_err_h(&self) -> OptF64 {
        self.details.rotation_period_err_h
    }
    /// Mean molecular weight per electron, if given (consumers default to 2).
    pub fn mu_e(&self) -> OptF64 {
        self.details.mu_e
    }
    /// Effective temperature, K.
    pub fn teff_k(&self) -> OptF64 {
        self.details.teff_k
    }
    /// 1σ effective-temperature error, K.
    pub fn teff_err_k(&self) -> OptF64 {
        self.details.teff_err_k
    }
    /// White-dwarf core composition, if stated.
    pub fn core(&self) -> Option<CoreLabel> {
        self.details.core
    }
    /// White-dwarf hydrogen layer, if stated.
    pub fn envelope(&self) -> Option<EnvelopeLabel> {
        self.details.envelope
    }
    /// The user's own standard-gravity model radius, R☉.
    pub fn radius_model_rsun(&self) -> OptF64 {
        self.details.radius_model_rsun
    }
    /// Free-text reference.
    pub fn reference(&self) -> Option<&str> {
        self.details.reference.as_deref()
    }
    /// The optional columns for writing (the side record is allocated on first use).
    pub fn details_mut(&mut self) -> &mut ObjectDetails {
        self.details.make_mut()
    }
}

impl serde::Serialize for CatalogueObject {
    /// The flat form the object had before its optional columns moved to [`ObjectDetails`]
    /// (same fields, same order), so that anything serialising objects reads the same.
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeStruct;
        let d = &*self.details;
        let mut s = serializer.serialize_struct("CatalogueObject", 22)?;
        s.serialize_field("id", self.id.as_str())?;
        s.serialize_field("class", &self.class)?;
        s.serialize_field("mass_msun", &self.mass_msun)?;
        s.serialize_field("mass_err_lo_msun", &self.mass_err_lo_msun)?;
        s.serialize_field("mass_err_hi_msun", &self.mass_err_hi_msun)?;
        s.serialize_field("mass_limit", &self.mass_limit)?;
        s.serialize_field("radius_rsun", &d.radius_rsun)?;
        s.serialize_field("radius_err_rsun", &d.radius_err_rsun)?;
        s.serialize_field("age_gyr", &d.age_gyr)?;
        s.serialize_field("age_err_gyr", &d.age_err_gyr)?;
        s.serialize_field("rotation_period_h", &d.rotation_period_h)?;
        s.serialize_field("rotation_period_err_h", &d.rotation_period_err_h)?;
        s.serialize_field("mu_e", &d.mu_e)?;
        s.serialize_field("teff_k", &d.teff_k)?;
        s.serialize_field("teff_err_k", &d.teff_err_k)?;
        s.serialize_field("core", &d.core)?;
        s.serialize_field("envelope", &d.envelope)?;
        s.serialize_field("radius_model_rsun", &d.radius_model_rsun)?;
        s.serialize_field("mass_method", &self.mass_method)?;
        s.serialize_field("reference", &d.reference)?;
        s.serialize_field("source_file", &self.source_file)?;
        s.serialize_field("source_row", &self.source_row)?;
        s.end()
    }
}

/// The catalogue file an object came from, as given on the command line. Every object of a
/// file shares one copy of the name (a string per object was a million allocations, and ~70
/// bytes each, for a catalogue of a million objects); it reads as a `&str`. An `Arc<String>`
/// rather than an `Arc<str>`: a thin pointer, 8 bytes less in every object.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct SourceFile(std::sync::Arc<String>);

impl std::ops::Deref for SourceFile {
    type Target = str;
    fn deref(&self) -> &str {
        &self.0
    }
}

impl std::fmt::Display for SourceFile {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}

impl From<&str> for SourceFile {
    fn from(s: &str) -> Self {
        SourceFile(std::sync::Arc::new(s.to_string()))
    }
}

impl From<String> for SourceFile {
    fn from(s: String) -> Self {
        SourceFile(std::sync::Arc::new(s))
    }
}

impl serde::Serialize for SourceFile {
    /// As the plain string (what `accepted.csv` and the JSON outputs carry).
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.serialize_str(&self.0)
    }
}

/// One rejected row.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct QuarantinedRow {
    /// The catalogue file.
    pub file: String,
    /// 1-based data row.
    pub row: usize,
    /// The row's id, if it has one.
    pub id: Option<String>,
    /// The first failing column (its name in the file), or `(row)` for a malformed row.
    pub column: String,
    /// One of the reasons of the module table.
    pub reason: String,
}

/// Row counts of one catalogue; `rows_in = rows_accepted + rows_quarantined`.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct CatalogueTally {
    /// The catalogue file.
    pub path: String,
    /// Data rows read.
    pub rows_in: usize,
    /// Rows accepted.
    pub rows_accepted: usize,
    /// Rows quarantined.
    pub rows_quarantined: usize,
}

/// Everything vetting produced for a set of catalogues, in file and row order.
#[derive(Debug, Clone, PartialEq, Default, serde::Serialize)]
pub struct Vetted {
    /// Accepted objects.
    pub objects: Vec<CatalogueObject>,
    /// Rejected rows.
    pub quarantine: Vec<QuarantinedRow>,
    /// One tally per catalogue.
    pub tallies: Vec<CatalogueTally>,
}

/// The stable reason strings of the module table.
pub mod reason {
    /// Prefix of a malformed row's reason.
    pub const MALFORMED_PREFIX: &str = "malformed row: ";
    /// Column name used for a malformed row.
    pub const WHOLE_ROW: &str = "(row)";
    /// Empty id.
    pub const MISSING_ID: &str = "missing id";
    /// A data row past the 32-bit row numbers objects carry.
    pub const ROW_BEYOND_LIMIT: &str =
        "row number beyond 4 294 967 295 (split the catalogue into several files)";
    /// Id seen earlier in the same file.
    pub const DUPLICATE_ID: &str = "duplicate id within catalogue";
    /// Ids that differ as written but coincide once normalised.
    pub const LOOKALIKE_ID: &str =
        "id collides with another row's after Unicode normalisation (both quarantined)";
    /// Symmetric and split errors in the same row.
    pub const BOTH_ERRORS: &str = "both mass_err and mass_err_lo/mass_err_hi given (ambiguous)";
    /// Empty class.
    pub const MISSING_CLASS: &str = "missing class";
    /// Class not canonical and not mapped.
    pub const UNKNOWN_CLASS: &str = "unknown class label";
    /// Bad `mass_limit`.
    pub const UNKNOWN_LIMIT: &str = "unknown mass_limit value (expected empty, upper or lower)";
    /// Bad `core`.
    pub const UNKNOWN_CORE: &str = "unknown core (expected he, co or one)";
    /// Bad `envelope`.
    pub const UNKNOWN_ENVELOPE: &str = "unknown envelope (expected thick or thin)";
    /// Bad `mass_method`.
    pub const UNKNOWN_MASS_METHOD: &str =
        "unknown mass_method (expected dynamical, redshift or model)";
    /// Empty mass.
    pub const MISSING_MASS: &str = "missing mass";
    /// Text that is not a number.
    pub const NOT_A_NUMBER: &str = "not a number";
    /// NaN or infinity.
    pub const NOT_FINITE: &str = "not finite";
    /// Zero or negative where a positive value is needed.
    pub const NOT_POSITIVE: &str = "not positive";
    /// No mass error for a measured mass.
    pub const MISSING_MASS_ERROR: &str = "missing mass error";
    /// Split error with one side empty.
    pub const ONE_SIDED_ERROR: &str = "only one of mass_err_lo and mass_err_hi given";
    /// μ_e out of range.
    pub const MU_E_RANGE: &str = "mu_e outside [1, 3]";
    /// Brown dwarf too heavy.
    pub const BD_TOO_HEAVY: &str = "above 0.2 Msun, implausible for a brown_dwarf";
    /// Hydrogen burner too heavy for a very-low-mass sample.
    pub const HB_TOO_HEAVY: &str = "above 1.0 Msun, implausible for the hburning sample";
    /// White dwarf too heavy.
    pub const WD_TOO_HEAVY: &str = "above 2.0 Msun, implausible for a white_dwarf";
    /// White dwarf too light.
    pub const WD_TOO_LIGHT: &str = "below 0.1 Msun, implausible for a white_dwarf";
}

/// Brown dwarfs above this mass are quarantined, M☉ (a documented choice, see module doc).
pub const BROWN_DWARF_MAX_MSUN: f64 = 0.2;
/// Hydrogen burners above this mass are quarantined, M☉ (choice).
pub const HBURNING_MAX_MSUN: f64 = 1.0;
/// White dwarfs above this mass are quarantined, M☉ (choice).
pub const WHITE_DWARF_MAX_MSUN: f64 = 2.0;
/// White dwarfs below this mass are quarantined, M☉ (choice).
pub const WHITE_DWARF_MIN_MSUN: f64 = 0.1;
/// Accepted range of μ_e (choice: hydrogen gives 1, no composition gives more than ~2.2).
pub const MU_E_RANGE: (f64, f64) = (1.0, 3.0);

/// A resolved column: its index in the table, its name in the file, its unit.
#[derive(Debug, Clone)]
struct Col {
    index: usize,
    name: String,
    unit: Option<Unit>,
}

/// The canonical columns found in one table, by their slot in
/// [`CANONICAL_COLUMNS`](super::colmap::CANONICAL_COLUMNS): a row looks its columns up ~20
/// times, so a hash map here was a measurable share of vetting a large file.
#[derive(Debug, Default, Clone)]
struct Layout {
    cols: [Option<Col>; 21],
}

/// Position of a canonical column name in `CANONICAL_COLUMNS` (a `match`, not a search).
/// Always inlined, like the row accessors below: every caller names a literal column, so the
/// match folds to a constant at compile time (it was a string comparison per cell, perf).
#[inline(always)]
fn slot(canonical: &str) -> Option<usize> {
    Some(match canonical {
        "id" => 0,
        "class" => 1,
        "mass" => 2,
        "mass_err" => 3,
        "mass_err_lo" => 4,
        "mass_err_hi" => 5,
        "mass_limit" => 6,
        "radius" => 7,
        "radius_err" => 8,
        "age" => 9,
        "age_err" => 10,
        "rotation_period" => 11,
        "rotation_period_err" => 12,
        "mu_e" => 13,
        "teff" => 14,
        "teff_err" => 15,
        "core" => 16,
        "envelope" => 17,
        "radius_model" => 18,
        "mass_method" => 19,
        "ref" => 20,
        _ => return None,
    })
}

impl Layout {
    #[inline(always)]
    fn get(&self, canonical: &str) -> Option<&Col> {
        self.cols[slot(canonical)?].as_ref()
    }

    fn get_mut(&mut self, canonical: &str) -> Option<&mut Col> {
        self.cols[slot(canonical)?].as_mut()
    }

    fn insert(&mut self, canonical: &str, col: Col) {
        if let Some(i) = slot(canonical) {
            self.cols[i] = Some(col);
        }
    }
}

/// Finds the canonical columns and their units; fails on whole-file problems.
fn resolve(
    path: &Path,
    columns: &[ColumnMeta],
    map: Option<&ColumnMap>,
) -> Result<Layout, CatalogueError> {
    let mut layout = Layout::default();
    for canonical in super::colmap::CANONICAL_COLUMNS {
        let mapped = map.and_then(|m| m.columns.get(canonical));
        let name = mapped.map(String::as_str).unwrap_or(canonical);
        let hits: Vec<usize> = columns
            .iter()
            .enumerate()
            .filter(|(_, c)| c.name == name)
            .map(|(i, _)| i)
            .collect();
        match hits.as_slice() {
            [] => {
                if mapped.is_some() {
                    return Err(CatalogueError::MappedColumnAbsent {
                        path: path.to_path_buf(),
                        canonical: canonical.to_string(),
                        column: name.to_string(),
                    });
                }
            }
            [i] => {
                layout.insert(
                    canonical,
                    Col {
                        index: *i,
                        name: name.to_string(),
                        unit: None,
                    },
                );
            }
            _ => {
                return Err(CatalogueError::DuplicateColumn {
                    path: path.to_path_buf(),
                    column: name.to_string(),
                })
            }
        }
    }
    // One file column behind two canonical columns (`mass` and `mass_err` both mapped to `m`)
    // would make every error equal to its value: refused, whatever the rows hold.
    let mut owners: HashMap<usize, &str> = HashMap::new();
    for canonical in super::colmap::CANONICAL_COLUMNS {
        if let Some(col) = layout.get(canonical) {
            if let Some(first) = owners.insert(col.index, canonical) {
                return Err(CatalogueError::SharedColumn {
                    path: path.to_path_buf(),
                    column: col.name.clone(),
                    first: first.to_string(),
                    second: canonical.to_string(),
                });
            }
        }
    }
    let missing = |column: &str| CatalogueError::MissingColumn {
        path: path.to_path_buf(),
        column: column.to_string(),
    };
    for required in ["id", "class", "mass"] {
        if layout.get(required).is_none() {
            return Err(missing(required));
        }
    }
    let (has_sym, has_lo, has_hi) = (
        layout.get("mass_err").is_some(),
        layout.get("mass_err_lo").is_some(),
        layout.get("mass_err_hi").is_some(),
    );
    if has_lo && !has_hi {
        return Err(missing("mass_err_hi"));
    }
    if has_hi && !has_lo {
        return Err(missing("mass_err_lo"));
    }
    if !has_sym && !has_lo && layout.get("mass_limit").is_none() {
        // Every row would need an error and none can have one.
        return Err(missing("mass_err"));
    }
    // Units: value columns first, so that error columns can inherit.
    let order = [
        ("mass", None),
        ("mass_err", Some("mass")),
        ("mass_err_lo", Some("mass")),
        ("mass_err_hi", Some("mass")),
        ("radius", None),
        ("radius_err", Some("radius")),
        ("age", None),
        ("age_err", Some("age")),
        ("rotation_period", None),
        ("rotation_period_err", Some("rotation_period")),
        ("mu_e", None),
        ("teff", None),
        ("teff_err", Some("teff")),
        ("radius_model", None),
    ];
    let mut unit_strings: HashMap<&str, String> = HashMap::new();
    for (canonical, value_col) in order {
        let Some(col) = layout.get(canonical).cloned() else {
            continue;
        };
        let quantity = column_quantity(canonical).unwrap_or(units::Quantity::Dimensionless);
        let from_map = map.and_then(|m| m.units.get(canonical)).cloned();
        let from_file = columns[col.index]
            .unit
            .as_ref()
            .filter(|u| !u.trim().is_empty())
            .cloned();
        let inherited = value_col.and_then(|v| unit_strings.get(v).cloned());
        let unit_str = from_map
            .or(from_file)
            .or(inherited)
            .unwrap_or_else(|| quantity.canonical_unit().to_string());
        let parsed = if value_col.is_some() {
            units::parse_error_unit(&unit_str, quantity)
        } else {
            units::parse_for(&unit_str, quantity)
        };
        let unit = parsed.map_err(|e| CatalogueError::BadUnit {
            path: path.to_path_buf(),
            column: if col.name == canonical {
                col.name.clone()
            } else {
                format!("{} ({canonical})", col.name)
            },
            unit: unit_str.clone(),
            reason: e.0,
        })?;
        unit_strings.insert(canonical, unit_str);
        if let Some(c) = layout.get_mut(canonical) {
            c.unit = Some(unit);
        }
    }
    Ok(layout)
}

/// Whether a character is invisible in an identifier: a control character (Unicode category
/// Cc, NUL included), a format character (category Cf: zero-width space and joiners, the BOM,
/// bidirectional controls, soft hyphen, …) or another default-ignorable code point (variation
/// selectors, Hangul fillers, tags). Ranges from the Unicode Character Database's
/// DerivedCoreProperties (Default_Ignorable_Code_Point) and category Cf, from memory.
fn is_invisible(c: char) -> bool {
    matches!(c as u32,
        0x00..=0x1F | 0x7F..=0x9F | 0xAD | 0x34F | 0x600..=0x605 | 0x61C | 0x6DD | 0x70F
        | 0x890..=0x891 | 0x8E2 | 0x115F..=0x1160 | 0x17B4..=0x17B5 | 0x180B..=0x180F
        | 0x200B..=0x200F | 0x202A..=0x202E | 0x2060..=0x206F | 0x3164 | 0xFE00..=0xFE0F
        | 0xFEFF | 0xFFA0 | 0xFFF0..=0xFFFB | 0x110BD | 0x110CD | 0x13430..=0x1343F
        | 0x1BCA0..=0x1BCA3 | 0x1D173..=0x1D17A | 0xE0000..=0xE0FFF)
}

/// The form in which ids are compared and written: NFC, invisible characters removed, trimmed.
pub fn normalise_id(raw: &str) -> String {
    normalised(raw).into_owned()
}

/// [`normalise_id`] without a copy when nothing but the trim applies: printable ASCII is
/// already NFC and holds no invisible character (the common case, and the normalisation tables
/// are slow next to a file read).
fn normalised(raw: &str) -> Cow<'_, str> {
    if raw.bytes().all(|b| (0x20..0x7F).contains(&b)) {
        return Cow::Borrowed(trim(raw));
    }
    use unicode_normalization::UnicodeNormalization;
    let cleaned: String = raw.nfc().filter(|c| !is_invisible(*c)).collect();
    Cow::Owned(cleaned.trim().to_string())
}

/// `str::trim`, answered from the first and last bytes when both are printable ASCII (no
/// white space can be trimmed then): almost every cell of a catalogue, and the general trim
/// decodes characters from both ends (≈ 3 % of `vet` on a million rows, perf).
#[inline]
fn trim(s: &str) -> &str {
    let printable = |b: Option<&u8>| b.is_some_and(|&b| (0x21..0x7F).contains(&b));
    if printable(s.as_bytes().first()) && printable(s.as_bytes().last()) {
        s
    } else {
        s.trim()
    }
}

/// Text of a cell for text columns; `None` when empty.
fn cell_text(cell: CellRef<'_>) -> Option<Cow<'_, str>> {
    match cell {
        CellRef::Missing => None,
        CellRef::Text(s) => {
            let t = trim(s);
            (!t.is_empty()).then_some(Cow::Borrowed(t))
        }
        CellRef::Number(v) => Some(Cow::Owned(if v.fract() == 0.0 && v.abs() < 1e15 {
            format!("{}", v as i64)
        } else {
            format!("{v}")
        })),
    }
}

/// A failed check: (file column name, reason).
type Fail = (String, String);

/// Number of a cell: `Ok(None)` when empty.
fn cell_number(cell: CellRef<'_>) -> Result<Option<f64>, &'static str> {
    let v = match cell {
        CellRef::Missing => return Ok(None),
        CellRef::Number(v) => v,
        CellRef::Text(s) => {
            let t = trim(s);
            if t.is_empty() {
                return Ok(None);
            }
            t.parse::<f64>().map_err(|_| reason::NOT_A_NUMBER)?
        }
    };
    if v.is_finite() {
        Ok(Some(v))
    } else {
        Err(reason::NOT_FINITE)
    }
}

/// Optional columns in which NaN means "no value", as FITS and VOTable define it, so that the
/// same table vets alike from every format (ECSV and CSV carry NaN as a number). In the
/// required columns (mass and its errors) NaN stays a quarantine reason.
const NAN_IS_MISSING: [&str; 10] = [
    "radius",
    "radius_err",
    "age",
    "age_err",
    "rotation_period",
    "rotation_period_err",
    "mu_e",
    "teff",
    "teff_err",
    "radius_model",
];

/// Whether a cell holds NaN (as a number, or as the text `nan`/`NaN`).
fn cell_is_nan(cell: CellRef<'_>) -> bool {
    match cell {
        CellRef::Number(v) => v.is_nan(),
        // Only text that starts like `nan` (any case, optional sign) can parse as NaN.
        CellRef::Text(t) => {
            let t = trim(t);
            let b = t.trim_start_matches(['+', '-']).as_bytes();
            b.len() >= 3
                && b[..3].eq_ignore_ascii_case(b"nan")
                && t.parse::<f64>().is_ok_and(f64::is_nan)
        }
        CellRef::Missing => false,
    }
}

/// Row-level access to the resolved columns.
struct RowView<'a> {
    layout: &'a Layout,
    cells: &'a [CellRef<'a>],
}

impl<'a> RowView<'a> {
    #[inline(always)]
    fn cell(&self, canonical: &str) -> Option<(&'a Col, CellRef<'a>)> {
        let col = self.layout.get(canonical)?;
        Some((
            col,
            self.cells
                .get(col.index)
                .copied()
                .unwrap_or(CellRef::Missing),
        ))
    }

    #[inline(always)]
    fn text(&self, canonical: &str) -> Option<Cow<'a, str>> {
        self.cell(canonical).and_then(|(_, c)| cell_text(c))
    }

    #[inline(always)]
    fn fail(&self, canonical: &str, why: &str) -> Fail {
        let name = self
            .layout
            .get(canonical)
            .map_or(canonical.to_string(), |c| c.name.clone());
        (name, why.to_string())
    }

    /// Raw number and unit of a column; `Ok(None)` when the column is absent or empty.
    #[inline(always)]
    fn raw(&self, canonical: &str) -> Result<Option<(f64, Unit)>, Fail> {
        let Some((col, cell)) = self.cell(canonical) else {
            return Ok(None);
        };
        if NAN_IS_MISSING.contains(&canonical) && cell_is_nan(cell) {
            return Ok(None);
        }
        let v = cell_number(cell).map_err(|why| (col.name.clone(), why.to_string()))?;
        let unit = col.unit.unwrap_or(Unit {
            dimension: units::Dimension::Dimensionless,
            factor_to_canonical: 1.0,
            log10: false,
        });
        Ok(v.map(|v| (v, unit)))
    }

    /// A strictly positive linear quantity in canonical units.
    #[inline(always)]
    fn positive(&self, canonical: &str) -> Result<Option<f64>, Fail> {
        match self.raw(canonical)? {
            None => Ok(None),
            Some((v, unit)) => {
                if v <= 0.0 && !unit.log10 {
                    return Err(self.fail(canonical, reason::NOT_POSITIVE));
                }
                let c = unit.to_canonical(v);
                if !c.is_finite() {
                    return Err(self.fail(canonical, reason::NOT_FINITE));
                }
                if c <= 0.0 {
                    // 10^v underflowed: no positive mass survives the conversion.
                    return Err(self.fail(canonical, reason::NOT_POSITIVE));
                }
                Ok(Some(c))
            }
        }
    }

    /// A mass error in M☉, propagated through a logarithm if its unit is one.
    #[inline(always)]
    fn mass_error(&self, canonical: &str, mass_msun: f64) -> Result<Option<f64>, Fail> {
        match self.raw(canonical)? {
            None => Ok(None),
            Some((v, unit)) => {
                if v <= 0.0 {
                    return Err(self.fail(canonical, reason::NOT_POSITIVE));
                }
                let c = if unit.log10 {
                    // Delta method: d(10^x) = 10^x ln(10) dx.
                    mass_msun * std::f64::consts::LN_10 * v
                } else {
                    v * unit.factor_to_canonical
                };
                if !c.is_finite() {
                    return Err(self.fail(canonical, reason::NOT_FINITE));
                }
                if c <= 0.0 {
                    return Err(self.fail(canonical, reason::NOT_POSITIVE));
                }
                Ok(Some(c))
            }
        }
    }
}

/// Vets one row (duplicate ids are handled by the caller).
fn vet_row(
    view: &RowView<'_>,
    map: Option<&ColumnMap>,
    source_file: &SourceFile,
    row_number: usize,
) -> Result<CatalogueObject, Fail> {
    let source_row = u32::try_from(row_number).map_err(|_| {
        (
            reason::WHOLE_ROW.to_string(),
            reason::ROW_BEYOND_LIMIT.to_string(),
        )
    })?;
    let id = view
        .text("id")
        .map(|raw| ObjectId::from(normalised(&raw)))
        .filter(|id| !id.is_empty())
        .ok_or_else(|| view.fail("id", reason::MISSING_ID))?;
    let label = view
        .text("class")
        .ok_or_else(|| view.fail("class", reason::MISSING_CLASS))?;
    let canonical_label = match map {
        Some(m) => m.class_label(&label),
        None => ObjectClass::from_label(&label).map(ObjectClass::label),
    };
    let class = canonical_label
        .and_then(ObjectClass::from_label)
        .ok_or_else(|| view.fail("class", reason::UNKNOWN_CLASS))?;
    let mass_limit = match view.text("mass_limit").as_deref() {
        None => MassLimit::None,
        Some("upper") => MassLimit::Upper,
        Some("lower") => MassLimit::Lower,
        Some(_) => return Err(view.fail("mass_limit", reason::UNKNOWN_LIMIT)),
    };
    let mass_msun = view
        .positive("mass")?
        .ok_or_else(|| view.fail("mass", reason::MISSING_MASS))?;

    // Errors: symmetric or split, never both in one row.
    let lo = view.mass_error("mass_err_lo", mass_msun)?;
    let hi = view.mass_error("mass_err_hi", mass_msun)?;
    if lo.is_some() || hi.is_some() {
        let symmetric = view.cell("mass_err").is_some_and(|(_, c)| match c {
            CellRef::Missing => false,
            CellRef::Number(v) => !v.is_nan(),
            CellRef::Text(t) => !t.trim().is_empty(),
        });
        if symmetric {
            return Err(view.fail("mass_err", reason::BOTH_ERRORS));
        }
    }
    let (err_lo, err_hi) = match (lo, hi) {
        (Some(l), Some(h)) => (Some(l), Some(h)),
        (Some(_), None) => return Err(view.fail("mass_err_hi", reason::ONE_SIDED_ERROR)),
        (None, Some(_)) => return Err(view.fail("mass_err_lo", reason::ONE_SIDED_ERROR)),
        (None, None) => {
            let s = view.mass_error("mass_err", mass_msun)?;
            (s, s)
        }
    };
    if err_lo.is_none() && mass_limit == MassLimit::None {
        let col = if view.layout.get("mass_err").is_some() {
            "mass_err"
        } else {
            "mass_err_lo"
        };
        return Err(view.fail(col, reason::MISSING_MASS_ERROR));
    }

    let radius_rsun = view.positive("radius")?;
    let radius_err_rsun = view.positive("radius_err")?;
    let age_gyr = view.positive("age")?;
    let age_err_gyr = view.positive("age_err")?;
    let rotation_period_h = view.positive("rotation_period")?;
    let rotation_period_err_h = view.positive("rotation_period_err")?;
    let mu_e = match view.raw("mu_e")? {
        None => None,
        Some((v, unit)) => {
            let v = unit.to_canonical(v);
            if !(MU_E_RANGE.0..=MU_E_RANGE.1).contains(&v) {
                return Err(view.fail("mu_e", reason::MU_E_RANGE));
            }
            Some(v)
        }
    };
    let teff_k = view.positive("teff")?;
    let teff_err_k = view.positive("teff_err")?;
    let radius_model_rsun = view.positive("radius_model")?;
    let core = match view.text("core") {
        None => None,
        Some(t) => {
            Some(CoreLabel::from_label(&t).ok_or_else(|| view.fail("core", reason::UNKNOWN_CORE))?)
        }
    };
    let envelope = match view.text("envelope") {
        None => None,
        Some(t) => Some(
            EnvelopeLabel::from_label(&t)
                .ok_or_else(|| view.fail("envelope", reason::UNKNOWN_ENVELOPE))?,
        ),
    };
    let mass_method = match view.text("mass_method") {
        None => MassMethod::Unknown,
        Some(t) => MassMethod::from_label(&t)
            .ok_or_else(|| view.fail("mass_method", reason::UNKNOWN_MASS_METHOD))?,
    };

    // Plausibility for the class (see module doc for which limits are checked against what).
    let check_upper = mass_limit != MassLimit::Upper;
    let check_lower = mass_limit != MassLimit::Lower;
    let implausible = match class {
        ObjectClass::BrownDwarf if check_upper && mass_msun > BROWN_DWARF_MAX_MSUN => {
            Some(reason::BD_TOO_HEAVY)
        }
        ObjectClass::HBurning if check_upper && mass_msun > HBURNING_MAX_MSUN => {
            Some(reason::HB_TOO_HEAVY)
        }
        ObjectClass::WhiteDwarf if check_upper && mass_msun > WHITE_DWARF_MAX_MSUN => {
            Some(reason::WD_TOO_HEAVY)
        }
        ObjectClass::WhiteDwarf if check_lower && mass_msun < WHITE_DWARF_MIN_MSUN => {
            Some(reason::WD_TOO_LIGHT)
        }
        _ => None,
    };
    if let Some(why) = implausible {
        return Err(view.fail("mass", why));
    }

    Ok(CatalogueObject {
        id,
        class,
        mass_msun,
        mass_err_lo_msun: err_lo.into(),
        mass_err_hi_msun: err_hi.into(),
        mass_limit,
        mass_method,
        details: ObjectDetails {
            radius_rsun: radius_rsun.into(),
            radius_err_rsun: radius_err_rsun.into(),
            age_gyr: age_gyr.into(),
            age_err_gyr: age_err_gyr.into(),
            rotation_period_h: rotation_period_h.into(),
            rotation_period_err_h: rotation_period_err_h.into(),
            mu_e: mu_e.into(),
            teff_k: teff_k.into(),
            teff_err_k: teff_err_k.into(),
            core,
            envelope,
            radius_model_rsun: radius_model_rsun.into(),
            reference: view.text("ref").map(Box::<str>::from),
        }
        .into(),
        source_file: source_file.clone(),
        source_row,
    })
}

/// Checks rows in = accepted + quarantined (a typed error rather than a panic: it is a bug).
pub fn check_reconciled(tally: &CatalogueTally) -> Result<(), CatalogueError> {
    if tally.rows_in == tally.rows_accepted + tally.rows_quarantined {
        Ok(())
    } else {
        Err(CatalogueError::Unreconciled {
            path: PathBuf::from(&tally.path),
            rows_in: tally.rows_in,
            accepted: tally.rows_accepted,
            quarantined: tally.rows_quarantined,
        })
    }
}

/// A fast, non-cryptographic hasher for the id table (the multiply-rotate scheme of the Firefox
/// hasher, common practice, no source): ids come from the user's own file, so a hash-flooding
/// attack is not a concern, and SipHash was a measurable share of vetting a million rows.
///
/// `finish` mixes the state with the 64-bit finaliser of MurmurHash3 (Appleby, public domain):
/// a multiply only carries low bits upwards, so without it the low bits — hashbrown's bucket
/// index — depended on the last few characters alone, and ids that count up (`SC-0000001`, …)
/// fell into ~2·10⁴ buckets for 10⁶ ids, long probe chains that were 15 % of vetting (perf).
#[derive(Default, Clone, Copy)]
struct IdHasher(u64);

impl std::hash::Hasher for IdHasher {
    fn finish(&self) -> u64 {
        let mut h = self.0;
        h ^= h >> 33;
        h = h.wrapping_mul(0xff51_afd7_ed55_8ccd);
        h ^= h >> 33;
        h = h.wrapping_mul(0xc4ce_b9fe_1a85_ec53);
        h ^ (h >> 33)
    }

    fn write(&mut self, bytes: &[u8]) {
        const K: u64 = 0x517c_c1b7_2722_0a95;
        let mut chunks = bytes.chunks_exact(8);
        for c in &mut chunks {
            let mut w = [0u8; 8];
            w.copy_from_slice(c);
            self.0 = (self.0.rotate_left(5) ^ u64::from_le_bytes(w)).wrapping_mul(K);
        }
        for &b in chunks.remainder() {
            self.0 = (self.0.rotate_left(5) ^ u64::from(b)).wrapping_mul(K);
        }
    }
}

/// The normalised ids seen so far, without an allocation per id: their text one after another
/// in one arena, a record (start, length) per id, and an open-addressing index (linear probing,
/// at most ¾ full): one byte per slot holding a 7-bit tag of the id's hash (0 = empty) and,
/// beside it, the record's number. A new id — most rows — is found absent from the tag bytes
/// alone (2 MB at 10⁶ ids, where 8-byte slots were 16 MB and a cache miss per row); the text
/// is compared only when a tag agrees. The rare extras — a first spelling that differs from
/// the normalised id, a lookalike collision — live in small side maps. A
/// `HashMap<Box<str>, _>` was two allocations per row and a quarter of vetting a million rows;
/// the chained `HashMap<u64, usize>` with 48-byte records that followed was 82 MB of the peak
/// at 10⁶ rows (this layout: 34 MB; the text aside in both).
#[derive(Default)]
struct IdTable {
    text: String,
    entries: Vec<IdEntry>,
    tags: Vec<u8>,
    slots: Vec<usize>,
    /// The first spelling seen, by record, when it differs from the normalised id itself.
    first_raw: HashMap<usize, Box<str>>,
    /// Records for which a second, different spelling has been seen (a lookalike collision).
    lookalike: std::collections::HashSet<usize>,
}

impl IdTable {
    fn hash(key: &str) -> u64 {
        use std::hash::Hasher;
        let mut h = IdHasher::default();
        h.write(key.as_bytes());
        h.finish()
    }

    /// The slot's tag: the hash's top seven bits with the high bit set (0 marks an empty slot);
    /// the slot's position comes from the low bits.
    fn tag(hash: u64) -> u8 {
        0x80 | (hash >> 57) as u8
    }

    fn key(&self, at: usize) -> &str {
        let e = &self.entries[at];
        &self.text[e.start..e.start + e.len]
    }

    /// The slot where `key` is, or the empty slot where it would go.
    fn probe(&self, key: &str, hash: u64) -> (usize, Option<usize>) {
        let mask = self.tags.len() - 1;
        let tag = Self::tag(hash);
        let mut i = (hash as usize) & mask;
        loop {
            let t = self.tags[i];
            if t == 0 {
                return (i, None);
            }
            if t == tag {
                let at = self.slots[i];
                if self.key(at) == key {
                    return (i, Some(at));
                }
            }
            i = (i + 1) & mask;
        }
    }

    /// The record of `key`, if seen.
    fn find(&self, key: &str) -> Option<usize> {
        if self.tags.is_empty() {
            return None;
        }
        self.probe(key, Self::hash(key)).1
    }

    /// Whether record `at` has met a second spelling.
    fn is_lookalike(&self, at: usize) -> bool {
        self.lookalike.contains(&at)
    }

    /// The record of `key` if seen; else records it (with `first_raw()`, its first spelling
    /// when that differs) and returns `None`. One hash and, unless the index must grow, one
    /// probe per row: `find` then `insert` hashed and probed every new id twice.
    fn find_or_insert(
        &mut self,
        key: &str,
        first_raw: impl FnOnce() -> Option<Box<str>>,
    ) -> Option<usize> {
        let hash = Self::hash(key);
        if !self.tags.is_empty() {
            let (slot, found) = self.probe(key, hash);
            if found.is_some() {
                return found;
            }
            if (self.entries.len() + 1) * 4 <= self.tags.len() * 3 {
                self.place(slot, hash, key, first_raw());
                return None;
            }
        }
        self.grow_for(1);
        let (slot, _) = self.probe(key, hash);
        self.place(slot, hash, key, first_raw());
        None
    }

    /// Puts a new id in the empty `slot` that probing for it found (room already made).
    fn place(&mut self, slot: usize, hash: u64, key: &str, first_raw: Option<Box<str>>) {
        let at = self.entries.len();
        self.tags[slot] = Self::tag(hash);
        self.slots[slot] = at;
        self.entries.push(IdEntry {
            start: self.text.len(),
            len: key.len(),
        });
        self.text.push_str(key);
        if let Some(raw) = first_raw {
            self.first_raw.insert(at, raw);
        }
    }

    /// Makes the index large enough for `more` further ids (at most ¾ full), re-placing every
    /// record when it grows.
    fn grow_for(&mut self, more: usize) {
        let needed = self.entries.len() + more;
        if needed * 4 <= self.tags.len() * 3 {
            return;
        }
        let size = (needed * 4 / 3 + 1).next_power_of_two().max(16);
        self.tags = vec![0; size];
        self.slots = vec![0; size];
        let mask = size - 1;
        for at in 0..self.entries.len() {
            let hash = Self::hash(self.key(at));
            let mut i = (hash as usize) & mask;
            while self.tags[i] != 0 {
                i = (i + 1) & mask;
            }
            self.tags[i] = Self::tag(hash);
            self.slots[i] = at;
        }
    }

    fn reserve(&mut self, rows: usize) {
        self.entries.reserve(rows);
        self.grow_for(rows);
    }
}

/// Where one normalised id lies in [`IdTable::text`].
#[derive(Debug)]
struct IdEntry {
    start: usize,
    len: usize,
}

/// The outcomes of a block of rows before the ids' check ([`RowVetter::vet_into`],
/// [`RowVetter::accept_block`]): the objects that passed every other check side by side, so
/// that they can be handed over as they lie, and one event per row in row order.
#[derive(Debug, Default)]
pub struct BlockOutcomes {
    objects: Vec<CatalogueObject>,
    events: Vec<RowEvent>,
}

/// One row of a [`BlockOutcomes`].
#[derive(Debug)]
enum RowEvent {
    /// The next object of the block; the id as read when it differs from the normalised id.
    Object(Option<Box<str>>),
    /// The reader could only partly parse the row.
    Malformed(QuarantinedRow),
    /// A column failed.
    Rejected(QuarantinedRow),
}

/// What [`RowVetter::vet_one`] makes of one row before the ids' check.
// The object inline: an outcome is moved once, into the accepted objects; a box would be an
// allocation per row.
#[allow(clippy::large_enum_variant)]
#[derive(Debug)]
pub enum RowOutcome {
    /// The reader could only partly parse the row (quarantined whatever its id).
    Malformed(QuarantinedRow),
    /// Every column passed; the id as read when it differs from the object's normalised id.
    Accepted(CatalogueObject, Option<Box<str>>),
    /// A column failed (the entry carries the id as read).
    Rejected(QuarantinedRow),
}

/// Takes the accepted objects while the catalogues are read, so that a caller that needs each
/// object only once (`vet`: `accepted.csv`, the summary, the first look at the tensions) never
/// holds them all: a million objects were 272 MB of memory, and their page faults, copies and
/// frees a third of `vet` (perf). See [`vet_files_into`]. `Send`: the CSV reader checks the
/// ids, and hands the objects over, on whichever thread is free while the next rows are vetted.
pub trait ObjectSink: Send {
    /// A new catalogue begins (its objects follow, then the next catalogue's).
    fn begin_catalogue(&mut self);
    /// The next accepted objects, in file and row order.
    fn accepted(&mut self, objects: &[CatalogueObject]);
    /// A lookalike id concerns objects already handed over: they should have been quarantined,
    /// so everything the sink was given is void and the caller must vet again while holding the
    /// objects ([`vet_files`]). Rare: only a file with two spellings of one id.
    fn spoiled(&mut self);
}

/// The checks of a row that depend on the row alone (every check but the ids'), for one
/// table's resolved columns: cheap to clone, and shared by the threads that vet rows in
/// parallel while the [`RowVetter`] that made it checks the ids of earlier rows.
#[derive(Debug, Clone)]
pub struct RowChecker<'m> {
    path_label: String,
    source_file: SourceFile,
    layout: Layout,
    map: Option<&'m ColumnMap>,
}

impl RowChecker<'_> {
    /// The part of [`RowVetter::push`] that depends on the row alone (every check but the
    /// ids'): rows may go through it in parallel, as long as their outcomes reach
    /// [`RowVetter::accept`] in row order.
    pub fn vet_one(
        &self,
        row_number: usize,
        cells: &[CellRef<'_>],
        malformed: Option<&str>,
    ) -> RowOutcome {
        let view = RowView {
            layout: &self.layout,
            cells,
        };
        let id = view.text("id");
        let quarantined = |column: String, reason: String| QuarantinedRow {
            file: self.path_label.clone(),
            row: row_number,
            id: id.as_deref().map(str::to_string),
            column,
            reason,
        };
        if let Some(why) = malformed {
            return RowOutcome::Malformed(quarantined(
                reason::WHOLE_ROW.to_string(),
                format!("{}{why}", reason::MALFORMED_PREFIX),
            ));
        }
        match vet_row(&view, self.map, &self.source_file, row_number) {
            Ok(obj) => {
                // The id as read, kept only when it is not the normalised id itself.
                let raw = id
                    .as_deref()
                    .filter(|raw| *raw != &*obj.id)
                    .map(Box::<str>::from);
                RowOutcome::Accepted(obj, raw)
            }
            Err((c, w)) => RowOutcome::Rejected(quarantined(c, w)),
        }
    }

    /// [`RowChecker::vet_one`] into a block's outcomes (rows may go through it in parallel,
    /// one block each, as long as the blocks reach [`RowVetter::accept_block`] in row order).
    pub fn vet_into(
        &self,
        block: &mut BlockOutcomes,
        row_number: usize,
        cells: &[CellRef<'_>],
        malformed: Option<&str>,
    ) {
        match self.vet_one(row_number, cells, malformed) {
            RowOutcome::Accepted(obj, raw) => {
                block.objects.push(obj);
                block.events.push(RowEvent::Object(raw));
            }
            RowOutcome::Malformed(q) => block.events.push(RowEvent::Malformed(q)),
            RowOutcome::Rejected(q) => block.events.push(RowEvent::Rejected(q)),
        }
    }
}

/// Vets the rows of one table as they come, in file order, so that a large catalogue is never
/// held as a table of cells: only the accepted objects, the quarantined rows and one entry per
/// id are kept.
///
/// Ids are checked in the same single pass: a repeated spelling is a duplicate (the first row
/// is kept), a different spelling of the same normalised id makes every row with that id a
/// lookalike. Because a lookalike may first show up after its twin was accepted, the rows it
/// concerns are moved to the quarantine in [`RowVetter::finish`] (a rare path); the result is
/// the same as checking all ids before the rows.
pub struct RowVetter<'m> {
    check: RowChecker<'m>,
    ids: IdTable,
    any_lookalike: bool,
    rows_in: usize,
    objects: Vec<CatalogueObject>,
    quarantine: Vec<QuarantinedRow>,
    /// Objects handed to a sink so far ([`RowVetter::hand_over`]).
    handed: usize,
    /// Whether the accepted objects go to a sink (then they are not reserved room for).
    streaming: bool,
}

impl<'m> RowVetter<'m> {
    /// Resolves the table's columns (whole-file checks: required columns, units, ...).
    pub fn new(
        path_label: &str,
        columns: &[ColumnMeta],
        map: Option<&'m ColumnMap>,
    ) -> Result<Self, CatalogueError> {
        Ok(Self {
            check: RowChecker {
                path_label: path_label.to_string(),
                source_file: SourceFile::from(path_label),
                layout: resolve(Path::new(path_label), columns, map)?,
                map,
            },
            ids: IdTable::default(),
            any_lookalike: false,
            rows_in: 0,
            objects: Vec::new(),
            quarantine: Vec::new(),
            handed: 0,
            streaming: false,
        })
    }

    /// Marks the accepted objects as going to a sink ([`RowVetter::hand_over`],
    /// [`RowVetter::finish_into`]) rather than kept: [`RowVetter::reserve`] then reserves no
    /// room for them.
    pub fn streaming(mut self, yes: bool) -> Self {
        self.streaming = yes;
        self
    }

    /// Hands the objects accepted so far to `sink`, if there is one (a reader calls it after
    /// each block of rows). Once a lookalike id has been seen the objects are kept instead:
    /// [`RowVetter::finish_into`] must be able to move the rows it concerns to the quarantine.
    pub fn hand_over(&mut self, sink: Option<&mut dyn ObjectSink>) {
        if !self.any_lookalike {
            self.give_to(sink);
        }
    }

    fn give_to(&mut self, sink: Option<&mut dyn ObjectSink>) {
        if self.objects.is_empty() {
            return;
        }
        if let Some(sink) = sink {
            sink.accepted(&self.objects);
            self.handed += self.objects.len();
            self.objects.clear();
        }
    }

    /// Vets one data row: `cells` in the table's column order, `malformed` the reader's reason
    /// when it could only partly parse the row.
    pub fn push(&mut self, row_number: usize, cells: &[CellRef<'_>], malformed: Option<&str>) {
        let outcome = self.vet_one(row_number, cells, malformed);
        self.accept(outcome);
    }

    /// The part of [`RowVetter::push`] that depends on the row alone (every check but the
    /// ids'): rows may go through it in parallel, as long as their outcomes reach
    /// [`RowVetter::accept`] in row order. See [`RowChecker::vet_one`].
    pub fn vet_one(
        &self,
        row_number: usize,
        cells: &[CellRef<'_>],
        malformed: Option<&str>,
    ) -> RowOutcome {
        self.check.vet_one(row_number, cells, malformed)
    }

    /// The row-only checks, detached from the ids' state: a reader vets the next rows with
    /// them while this vetter checks the ids of the rows before (see
    /// [`RowVetter::accept_block`]).
    pub fn checker(&self) -> RowChecker<'m> {
        self.check.clone()
    }

    /// Applies the ids' check to a row's outcome, in row order, and keeps the result: a
    /// repeated spelling is a duplicate, a second spelling a lookalike (checked before every
    /// other column, as in the module table).
    pub fn accept(&mut self, outcome: RowOutcome) {
        self.rows_in += 1;
        match outcome {
            RowOutcome::Malformed(q) => self.quarantine.push(q),
            RowOutcome::Accepted(obj, raw) => {
                let raw = raw.as_deref().unwrap_or(&obj.id);
                match self.id_failure(obj.source_row as usize, Some(raw)) {
                    Some(q) => self.quarantine.push(q),
                    None => self.objects.push(obj),
                }
            }
            RowOutcome::Rejected(q) => {
                let failure = self.id_failure(q.row, q.id.as_deref());
                self.quarantine.push(failure.unwrap_or(q));
            }
        }
    }

    /// [`RowChecker::vet_into`] with this vetter's checks.
    pub fn vet_into(
        &self,
        block: &mut BlockOutcomes,
        row_number: usize,
        cells: &[CellRef<'_>],
        malformed: Option<&str>,
    ) {
        self.check.vet_into(block, row_number, cells, malformed);
    }

    /// [`RowVetter::accept`] for every row of a block, in row order, leaving `block` empty
    /// (its capacity kept for the next block). The block's objects that pass the ids' check
    /// go to `sink` as they lie, or are kept; no object is moved one at a time (moving each
    /// 272-byte object through the outcome and into the kept vector was ~7 % of `vet`, perf).
    pub fn accept_block(&mut self, block: &mut BlockOutcomes, sink: Option<&mut dyn ObjectSink>) {
        let mut next_object = 0;
        let mut failed_objects: Vec<usize> = Vec::new();
        for event in block.events.drain(..) {
            self.rows_in += 1;
            match event {
                RowEvent::Malformed(q) => self.quarantine.push(q),
                RowEvent::Rejected(q) => {
                    let failure = self.id_failure(q.row, q.id.as_deref());
                    self.quarantine.push(failure.unwrap_or(q));
                }
                RowEvent::Object(raw) => {
                    let obj = &block.objects[next_object];
                    let raw = raw.as_deref().unwrap_or(&obj.id);
                    if let Some(q) = self.id_failure(obj.source_row as usize, Some(raw)) {
                        self.quarantine.push(q);
                        failed_objects.push(next_object);
                    }
                    next_object += 1;
                }
            }
        }
        if !failed_objects.is_empty() {
            let mut failed = failed_objects.into_iter().peekable();
            let mut k = 0;
            block.objects.retain(|_| {
                let drop = failed.peek() == Some(&k);
                if drop {
                    failed.next();
                }
                k += 1;
                !drop
            });
        }
        match sink {
            Some(sink) if !self.any_lookalike && self.objects.is_empty() => {
                if !block.objects.is_empty() {
                    sink.accepted(&block.objects);
                    self.handed += block.objects.len();
                }
                block.objects.clear();
            }
            _ => {
                // Grown to the powers of two that pushing one object at a time reached (an
                // append reserves only what it needs, and its doublings then end elsewhere:
                // up to 1.8 times the objects' bytes of capacity at 10⁶ objects).
                let needed = self.objects.len() + block.objects.len();
                if needed > self.objects.capacity() {
                    let target = needed.max(2 * self.objects.capacity()).next_power_of_two();
                    self.objects.reserve_exact(target - self.objects.len());
                }
                self.objects.append(&mut block.objects);
            }
        }
    }

    /// The ids' check of one row (`raw`: its id as read): the quarantine entry when the id is a
    /// duplicate or a lookalike, else `None` (a new id is recorded).
    fn id_failure(&mut self, row: usize, raw: Option<&str>) -> Option<QuarantinedRow> {
        // An id of invisible characters only is left to `vet_row` (missing id).
        let raw = raw?;
        let key = normalised(raw);
        if key.is_empty() {
            return None;
        }
        let why = match self
            .ids
            .find_or_insert(key.as_ref(), || (raw != key).then(|| raw.into()))
        {
            None => return None,
            Some(at) => {
                let first = self.ids.first_raw.get(&at).map_or(key.as_ref(), |b| &**b);
                if first != raw {
                    self.ids.lookalike.insert(at);
                    self.any_lookalike = true;
                }
                if self.ids.is_lookalike(at) {
                    reason::LOOKALIKE_ID
                } else {
                    reason::DUPLICATE_ID
                }
            }
        };
        let column = self
            .check
            .layout
            .get("id")
            .map_or("id".to_string(), |c| c.name.clone());
        Some(QuarantinedRow {
            file: self.check.path_label.clone(),
            row,
            id: Some(raw.to_string()),
            column,
            reason: why.to_string(),
        })
    }

    /// Makes room for `rows` more rows (a reader that knows the count: one allocation instead
    /// of a doubling series, whose last step briefly holds the old and the new array).
    pub fn reserve(&mut self, rows: usize) {
        if !self.streaming {
            self.objects.reserve(rows);
        }
        self.ids.reserve(rows);
    }

    /// Makes room in the id table for about `rows` more rows (a reader's estimate; the table
    /// is small next to the objects, so an overestimate costs little).
    pub fn reserve_ids(&mut self, rows: usize) {
        self.ids.reserve(rows);
    }

    /// Objects accepted so far (a progress count).
    pub fn accepted(&self) -> usize {
        self.objects.len()
    }

    /// Settles the lookalike ids and checks rows in = accepted + quarantined.
    pub fn finish(
        self,
    ) -> Result<(Vec<CatalogueObject>, Vec<QuarantinedRow>, CatalogueTally), CatalogueError> {
        self.finish_into(None)
    }

    /// [`RowVetter::finish`], handing the remaining accepted objects to `sink` (if any); a
    /// lookalike id after objects were handed over spoils the sink ([`ObjectSink::spoiled`]).
    pub fn finish_into(
        mut self,
        mut sink: Option<&mut dyn ObjectSink>,
    ) -> Result<(Vec<CatalogueObject>, Vec<QuarantinedRow>, CatalogueTally), CatalogueError> {
        if self.any_lookalike {
            if self.handed > 0 {
                // Some of the rows the lookalike concerns may have been handed over already.
                if let Some(s) = sink.as_deref_mut() {
                    s.spoiled();
                }
            }
            self.settle_lookalikes();
        }
        let tally = CatalogueTally {
            path: self.check.path_label.clone(),
            rows_in: self.rows_in,
            rows_accepted: self.handed + self.objects.len(),
            rows_quarantined: self.quarantine.len(),
        };
        check_reconciled(&tally)?;
        if self.handed == 0 || !self.any_lookalike {
            // Settled: the rest can go (all of it when nothing went before the lookalike).
            self.give_to(sink);
        }
        Ok((self.objects, self.quarantine, tally))
    }

    /// Every row whose id has two spellings is quarantined as a lookalike, including those
    /// that came before the second spelling (accepted, duplicates, or quarantined for another
    /// column): the ids' check comes first in the module table.
    fn settle_lookalikes(&mut self) {
        let ids = &self.ids;
        let lookalike = |key: &str| ids.find(key).is_some_and(|at| ids.is_lookalike(at));
        let id_col = self
            .check
            .layout
            .get("id")
            .map_or("id".to_string(), |c| c.name.clone());
        for q in &mut self.quarantine {
            if q.column == reason::WHOLE_ROW || q.reason == reason::LOOKALIKE_ID {
                continue;
            }
            if q.id
                .as_deref()
                .map(normalise_id)
                .is_some_and(|k| lookalike(&k))
            {
                q.column = id_col.clone();
                q.reason = reason::LOOKALIKE_ID.to_string();
            }
        }
        let objects = std::mem::take(&mut self.objects);
        for o in objects {
            match ids.find(&o.id).filter(|&at| ids.is_lookalike(at)) {
                Some(at) => self.quarantine.push(QuarantinedRow {
                    file: self.check.path_label.clone(),
                    row: o.source_row as usize,
                    id: Some(ids.first_raw.get(&at).map_or(&*o.id, |b| &**b).to_string()),
                    column: id_col.clone(),
                    reason: reason::LOOKALIKE_ID.to_string(),
                }),
                None => self.objects.push(o),
            }
        }
        // One entry per row: the row order of the file is restored.
        self.quarantine.sort_by_key(|q| q.row);
    }
}

/// Vets one table read from `path_label`: whole-file checks, then every row.
pub fn vet_table(
    path_label: &str,
    table: &RawTable,
    map: Option<&ColumnMap>,
) -> Result<(Vec<CatalogueObject>, Vec<QuarantinedRow>, CatalogueTally), CatalogueError> {
    let mut vetter = RowVetter::new(path_label, &table.columns, map)?;
    let malformed: HashMap<usize, &str> = table
        .malformed
        .iter()
        .map(|(r, why)| (*r, why.as_str()))
        .collect();
    let mut cells: Vec<CellRef<'_>> = Vec::new();
    for row in &table.rows {
        cells.clear();
        cells.extend(row.cells.iter().map(|c| c.as_ref()));
        vetter.push(
            row.row_number,
            &cells,
            malformed.get(&row.row_number).copied(),
        );
    }
    vetter.finish()
}

/// Appends `more` to `all`, moving the vector when `all` is empty (one catalogue of a million
/// objects is then never copied).
pub fn append<T>(all: &mut Vec<T>, mut more: Vec<T>) {
    if all.is_empty() {
        *all = more;
    } else {
        all.append(&mut more);
    }
}

/// Reads and vets every file in order. The map's `[options] table` applies when `opts` names
/// no table. The first whole-file problem stops everything (exit 2 at the command line).
///
/// CSV and Parquet files are vetted while they are read (no table of cells is built, see
/// [`RowVetter`]; Parquet a few row groups at a time); the other formats are read into a
/// [`RawTable`] first.
pub fn vet_files(
    paths: &[PathBuf],
    map: Option<&ColumnMap>,
    opts: &ReadOptions,
) -> Result<Vetted, CatalogueError> {
    vet_files_into(paths, map, opts, None)
}

/// [`vet_files`], handing the accepted objects to `sink` as they are vetted instead of keeping
/// them: the result's `objects` is then empty (its quarantine and tallies are complete). If
/// the sink was told [`ObjectSink::spoiled`], what it was given is void: call [`vet_files`].
/// The objects the sink sees, in order and catalogue by catalogue, are exactly `vet_files`'s.
pub fn vet_files_into(
    paths: &[PathBuf],
    map: Option<&ColumnMap>,
    opts: &ReadOptions,
    mut sink: Option<&mut dyn ObjectSink>,
) -> Result<Vetted, CatalogueError> {
    let mut opts = opts.clone();
    if opts.table.is_none() {
        opts.table = map.and_then(|m| m.table.clone());
    }
    // Only the columns vetting looks at: mapped names, else the canonical names.
    let wanted: Vec<String> = super::colmap::CANONICAL_COLUMNS
        .iter()
        .map(|c| map.map_or(*c, |m| m.file_column(c)).to_string())
        .collect();
    let mut out = Vetted::default();
    for path in paths {
        if let Err(e) = std::fs::metadata(path) {
            return Err(CatalogueError::Unreadable {
                path: path.clone(),
                reason: e.to_string(),
            });
        }
        let label = path.display().to_string();
        let format = match opts.format {
            Some(f) => Some(f),
            None => Format::from_path(path),
        };
        if let Some(s) = reborrow(&mut sink) {
            s.begin_catalogue();
        }
        let (objects, quarantine, tally) = match format {
            Some(Format::Csv) => {
                super::read_csv::vet_streaming(path, &label, map, reborrow(&mut sink))?
            }
            Some(Format::Parquet) => super::guard::quietly(|| {
                super::read_parquet::vet_streaming(path, &label, map, &wanted, reborrow(&mut sink))
            })
            .unwrap_or_else(|_| {
                Err(CatalogueError::Invalid {
                    path: path.clone(),
                    format: "parquet",
                    reason: "the decoder failed on this file (corrupt or unsupported content)"
                        .into(),
                })
            })?,
            _ => {
                let table = read_table_columns(path, &opts, Some(&wanted))?;
                let (objects, quarantine, tally) = vet_table(&label, &table, map)?;
                match reborrow(&mut sink) {
                    Some(s) => {
                        s.accepted(&objects);
                        (Vec::new(), quarantine, tally)
                    }
                    None => (objects, quarantine, tally),
                }
            }
        };
        append(&mut out.objects, objects);
        append(&mut out.quarantine, quarantine);
        out.tallies.push(tally);
    }
    // The objects stay in memory until every output is written: no spare capacity.
    out.objects.shrink_to_fit();
    Ok(out)
}

/// The sink for one call, its trait object's lifetime shortened to the call (a coercion that
/// `Option::as_deref_mut` cannot make).
pub(crate) fn reborrow<'a>(
    sink: &'a mut Option<&mut dyn ObjectSink>,
) -> Option<&'a mut dyn ObjectSink> {
    match sink {
        Some(s) => Some(&mut **s),
        None => None,
    }
}

#[cfg(test)]
mod tests {
    use super::super::table::{Cell, RawRow};
    use super::*;

    #[test]
    fn a_row_past_32_bit_row_numbers_is_quarantined_not_wrapped() {
        use crate::catalogue::table::{Cell, ColumnMeta, RawRow, RawTable};
        let col = |n: &str| ColumnMeta {
            name: n.into(),
            ..Default::default()
        };
        let t = |s: &str| Cell::Text(s.into());
        let row = |n: usize, id: &str| RawRow {
            row_number: n,
            cells: vec![t(id), t("white_dwarf"), t("0.6"), t("0.02")],
        };
        let last = u32::MAX as usize;
        let table = RawTable {
            columns: vec![col("id"), col("class"), col("mass"), col("mass_err")],
            rows: vec![row(last, "A"), row(last + 1, "B")],
            malformed: vec![],
        };
        let (objects, quarantine, tally) = vet_table("big.csv", &table, None).unwrap();
        assert_eq!((objects.len(), quarantine.len(), tally.rows_in), (1, 1, 2));
        assert_eq!(objects[0].source_row, u32::MAX);
        assert_eq!(quarantine[0].row, last + 1);
        assert_eq!(quarantine[0].reason, reason::ROW_BEYOND_LIMIT);
    }

    #[test]
    fn an_object_stays_compact() {
        // The layout documented on `CatalogueObject` (a million of them are held at once);
        // a new field that grows it should be a decision, not an accident. 72 bytes: the id
        // (24, inline up to 24 bytes), mass and its two errors, the source file and the side
        // record's pointer (8 each), the source row (4) and three one-byte enums, padded to 8.
        // It was 160 with the rarely filled columns inline, 80 with a 64-bit source row.
        assert_eq!(std::mem::size_of::<CatalogueObject>(), 72);
        assert_eq!(std::mem::size_of::<ObjectId>(), 24);
        assert_eq!(std::mem::size_of::<Details>(), 8);
        // The side record, allocated only for a row that fills one of its columns.
        assert_eq!(std::mem::size_of::<ObjectDetails>(), 104);
    }

    #[test]
    fn the_side_record_is_allocated_only_for_a_row_that_fills_it() {
        // Source: the layout's purpose (module docs); common practice, no source.
        let t = table(
            &["id", "class", "mass", "mass_err", "radius", "ref"],
            &[
                &["a", "white_dwarf", "0.6", "0.02", "", ""],
                &["b", "white_dwarf", "0.6", "0.02", "0.0125", ""],
                &["c", "white_dwarf", "0.6", "0.02", "", "Invented 2026"],
            ],
        );
        let (objs, q, _) = vet_table("t.csv", &t, None).unwrap();
        assert!(q.is_empty());
        let allocated: Vec<bool> = objs.iter().map(|o| o.details.is_allocated()).collect();
        assert_eq!(allocated, [false, true, true]);
        assert_eq!(objs[0].radius_rsun(), None);
        assert_eq!(objs[1].radius_rsun(), Some(0.0125));
        assert_eq!(objs[2].reference(), Some("Invented 2026"));
        // An allocated but empty record reads, compares and serialises as no record.
        let mut touched = objs[0].clone();
        touched.details_mut().age_gyr = OptF64::NONE;
        assert!(touched.details.is_allocated());
        assert_eq!(touched, objs[0]);
        assert_eq!(
            serde_json::to_string(&touched).unwrap(),
            serde_json::to_string(&objs[0]).unwrap()
        );
    }

    #[test]
    fn an_object_serialises_as_the_flat_record_it_was() {
        // Source: the JSON that `#[derive(serde::Serialize)]` gave the flat 160-byte struct
        // (every column a field, in this order) at b428666, captured from a test run there.
        let full = CatalogueObject {
            id: "WD 1".into(),
            class: ObjectClass::WhiteDwarf,
            mass_msun: 0.6,
            mass_err_lo_msun: OptF64::some(0.01),
            mass_err_hi_msun: OptF64::some(0.02),
            mass_limit: MassLimit::Upper,
            mass_method: MassMethod::Redshift,
            details: ObjectDetails {
                radius_rsun: OptF64::some(0.0125),
                radius_err_rsun: OptF64::some(0.001),
                age_gyr: OptF64::some(2.5),
                age_err_gyr: OptF64::some(0.5),
                rotation_period_h: OptF64::some(30.0),
                rotation_period_err_h: OptF64::some(1.5),
                mu_e: OptF64::some(2.0),
                teff_k: OptF64::some(12000.0),
                teff_err_k: OptF64::some(200.0),
                core: Some(CoreLabel::Co),
                envelope: Some(EnvelopeLabel::Thin),
                radius_model_rsun: OptF64::some(0.013),
                reference: Some("Invented 2026".into()),
            }
            .into(),
            source_file: "a.csv".into(),
            source_row: 7,
        };
        let bare = CatalogueObject {
            class: ObjectClass::BrownDwarf,
            mass_err_lo_msun: OptF64::NONE,
            mass_err_hi_msun: OptF64::NONE,
            mass_limit: MassLimit::None,
            mass_method: MassMethod::Unknown,
            details: Details::default(),
            ..full.clone()
        };
        assert_eq!(
            serde_json::to_string(&full).unwrap(),
            concat!(
                r#"{"id":"WD 1","class":"white_dwarf","mass_msun":0.6,"mass_err_lo_msun":0.01,"#,
                r#""mass_err_hi_msun":0.02,"mass_limit":"upper","radius_rsun":0.0125,"#,
                r#""radius_err_rsun":0.001,"age_gyr":2.5,"age_err_gyr":0.5,"#,
                r#""rotation_period_h":30.0,"rotation_period_err_h":1.5,"mu_e":2.0,"#,
                r#""teff_k":12000.0,"teff_err_k":200.0,"core":"co","envelope":"thin","#,
                r#""radius_model_rsun":0.013,"mass_method":"redshift","#,
                r#""reference":"Invented 2026","source_file":"a.csv","source_row":7}"#
            )
        );
        assert_eq!(
            serde_json::to_string(&bare).unwrap(),
            concat!(
                r#"{"id":"WD 1","class":"brown_dwarf","mass_msun":0.6,"mass_err_lo_msun":null,"#,
                r#""mass_err_hi_msun":null,"mass_limit":"none","radius_rsun":null,"#,
                r#""radius_err_rsun":null,"age_gyr":null,"age_err_gyr":null,"#,
                r#""rotation_period_h":null,"rotation_period_err_h":null,"mu_e":null,"#,
                r#""teff_k":null,"teff_err_k":null,"core":null,"envelope":null,"#,
                r#""radius_model_rsun":null,"mass_method":"unknown","reference":null,"#,
                r#""source_file":"a.csv","source_row":7}"#
            )
        );
    }

    #[test]
    fn no_vetted_number_is_nan() {
        // `OptF64` reads a stored NaN back as a value; vetting must never store one (a NaN
        // cell is quarantined, or missing in the optional columns: module table).
        let t = table(
            &[
                "id", "class", "mass", "mass_err", "radius", "age", "mu_e", "teff",
            ],
            &[
                &[
                    "a",
                    "white_dwarf",
                    "0.6",
                    "0.02",
                    "nan",
                    "NaN",
                    "nan",
                    "-nan",
                ],
                &["b", "white_dwarf", "nan", "0.02", "", "", "", ""],
                &["c", "white_dwarf", "0.6", "nan", "", "", "", ""],
            ],
        );
        let (objs, q, _) = vet_table("t.csv", &t, None).unwrap();
        assert_eq!((objs.len(), q.len()), (1, 2));
        let o = &objs[0];
        for v in [o.radius_rsun(), o.age_gyr(), o.mu_e(), o.teff_k()] {
            assert_eq!(v.get(), None);
        }
        assert!(q.iter().all(|q| q.reason == reason::NOT_FINITE));
    }

    fn table(header: &[&str], rows: &[&[&str]]) -> RawTable {
        RawTable {
            columns: header
                .iter()
                .map(|h| {
                    let (name, unit) = match h.split_once('[') {
                        Some((n, u)) => (n, Some(u.trim_end_matches(']').to_string())),
                        None => (*h, None),
                    };
                    ColumnMeta {
                        name: name.to_string(),
                        unit,
                        ucd: None,
                    }
                })
                .collect(),
            rows: rows
                .iter()
                .enumerate()
                .map(|(i, r)| RawRow {
                    row_number: i + 1,
                    cells: r
                        .iter()
                        .map(|s| {
                            if s.is_empty() {
                                Cell::Missing
                            } else {
                                Cell::Text(s.to_string())
                            }
                        })
                        .collect(),
                })
                .collect(),
            malformed: vec![],
        }
    }

    fn reasons(t: &RawTable, map: Option<&ColumnMap>) -> Vec<(usize, String, String)> {
        let (_, q, tally) = vet_table("t.csv", t, map).unwrap();
        assert_eq!(tally.rows_in, tally.rows_accepted + tally.rows_quarantined);
        q.into_iter().map(|q| (q.row, q.column, q.reason)).collect()
    }

    #[test]
    fn every_reason_fires_on_its_row() {
        let t = table(
            &[
                "id",
                "class",
                "mass",
                "mass_err",
                "mass_limit",
                "radius",
                "age",
                "mu_e",
            ],
            &[
                &["a", "brown_dwarf", "0.05", "0.01", "", "", "", ""],
                &["", "brown_dwarf", "0.05", "0.01", "", "", "", ""],
                &["a", "brown_dwarf", "0.05", "0.01", "", "", "", ""],
                &["c", "", "0.05", "0.01", "", "", "", ""],
                &["d", "BD", "0.05", "0.01", "", "", "", ""],
                &["e", "brown_dwarf", "0.05", "0.01", "maybe", "", "", ""],
                &["f", "brown_dwarf", "", "0.01", "", "", "", ""],
                &["g", "brown_dwarf", "heavy", "0.01", "", "", "", ""],
                &["h", "brown_dwarf", "nan", "0.01", "", "", "", ""],
                &["i", "brown_dwarf", "-0.05", "0.01", "", "", "", ""],
                &["j", "brown_dwarf", "0.05", "", "", "", "", ""],
                &["k", "brown_dwarf", "0.05", "0", "", "", "", ""],
                &["l", "brown_dwarf", "0.05", "0.01", "", "0", "", ""],
                &["m", "brown_dwarf", "0.05", "0.01", "", "", "-1", ""],
                &["n", "white_dwarf", "0.6", "0.01", "", "", "", "0.5"],
                &["o", "brown_dwarf", "0.3", "0.01", "", "", "", ""],
                &["p", "hburning", "1.2", "0.01", "", "", "", ""],
                &["q", "white_dwarf", "2.1", "0.01", "", "", "", ""],
                &["r", "white_dwarf", "0.05", "0.01", "", "", "", ""],
                &["s", "white_dwarf", "0.6", "inf", "", "", "", ""],
                &["t", "brown_dwarf", "0.3", "", "upper", "", "", ""],
                &["u", "white_dwarf", "0.05", "", "lower", "", "", ""],
                &["v", "hburning", "0.01", "0.001", "", "", "", ""],
            ],
        );
        let got = reasons(&t, None);
        let want: Vec<(usize, &str, &str)> = vec![
            (2, "id", reason::MISSING_ID),
            (3, "id", reason::DUPLICATE_ID),
            (4, "class", reason::MISSING_CLASS),
            (5, "class", reason::UNKNOWN_CLASS),
            (6, "mass_limit", reason::UNKNOWN_LIMIT),
            (7, "mass", reason::MISSING_MASS),
            (8, "mass", reason::NOT_A_NUMBER),
            (9, "mass", reason::NOT_FINITE),
            (10, "mass", reason::NOT_POSITIVE),
            (11, "mass_err", reason::MISSING_MASS_ERROR),
            (12, "mass_err", reason::NOT_POSITIVE),
            (13, "radius", reason::NOT_POSITIVE),
            (14, "age", reason::NOT_POSITIVE),
            (15, "mu_e", reason::MU_E_RANGE),
            (16, "mass", reason::BD_TOO_HEAVY),
            (17, "mass", reason::HB_TOO_HEAVY),
            (18, "mass", reason::WD_TOO_HEAVY),
            (19, "mass", reason::WD_TOO_LIGHT),
            (20, "mass_err", reason::NOT_FINITE),
        ];
        let want: Vec<(usize, String, String)> = want
            .into_iter()
            .map(|(r, c, w)| (r, c.to_string(), w.to_string()))
            .collect();
        assert_eq!(got, want);
    }

    #[test]
    fn split_errors_limits_and_log_masses() {
        let t = table(
            &[
                "id",
                "class",
                "mass[log10(solMass)]",
                "mass_err_lo",
                "mass_err_hi",
                "mass_limit",
            ],
            &[
                &["a", "brown_dwarf", "-1.3", "0.05", "0.1", ""],
                &["b", "brown_dwarf", "-1.3", "0.05", "", ""],
                &["c", "brown_dwarf", "-1.3", "", "", "upper"],
            ],
        );
        let (objs, q, _) = vet_table("t.csv", &t, None).unwrap();
        assert_eq!(objs.len(), 2);
        let m = 10f64.powf(-1.3);
        assert!((objs[0].mass_msun - m).abs() < 1e-15);
        // σ_M = M ln10 σ_log (delta method), each side separately.
        let ln10 = std::f64::consts::LN_10;
        assert!((objs[0].mass_err_lo_msun.get().unwrap() - m * ln10 * 0.05).abs() < 1e-15);
        assert!((objs[0].mass_err_hi_msun.get().unwrap() - m * ln10 * 0.1).abs() < 1e-15);
        assert_eq!(objs[1].mass_limit, MassLimit::Upper);
        assert_eq!(objs[1].mass_err_lo_msun, None);
        assert_eq!(q.len(), 1);
        assert_eq!(
            (q[0].column.as_str(), q[0].reason.as_str()),
            ("mass_err_hi", reason::ONE_SIDED_ERROR)
        );
    }

    #[test]
    fn map_renames_relabels_and_sets_units() {
        let map = ColumnMap::from_toml_str(
            "[columns]\nid = \"name\"\nclass = \"type\"\nmass = \"m_jup\"\nmass_err = \"e\"\n\
             [units]\nmass = \"jupiterMass\"\n[classes]\n\"BD\" = \"brown_dwarf\"\n",
            "m.toml",
        )
        .unwrap();
        let t = table(
            &["name", "type", "m_jup", "e", "junk"],
            &[&["x", "BD", "50", "5", "?"], &["y", "BD", "500", "5", "?"]],
        );
        let (objs, q, _) = vet_table("t.csv", &t, Some(&map)).unwrap();
        let mj = crate::constants::mjup_msun();
        assert_eq!(objs.len(), 1);
        assert_eq!(objs[0].mass_msun, 50.0 * mj);
        assert_eq!(objs[0].mass_err_hi_msun, Some(5.0 * mj)); // error inherits the mass unit
        assert_eq!(q[0].column, "m_jup");
        assert_eq!(q[0].reason, reason::BD_TOO_HEAVY);
    }

    #[test]
    fn whole_file_problems() {
        let e = |t: RawTable, map: Option<&ColumnMap>| vet_table("f.csv", &t, map).unwrap_err();
        let err = e(table(&["id", "class", "mass_err"], &[]), None);
        assert!(matches!(&err, CatalogueError::MissingColumn { column, .. } if column == "mass"));
        let err = e(table(&["id", "class", "mass"], &[]), None);
        assert!(
            matches!(&err, CatalogueError::MissingColumn { column, .. } if column == "mass_err")
        );
        let err = e(table(&["id", "class", "mass", "mass_err_lo"], &[]), None);
        assert!(
            matches!(&err, CatalogueError::MissingColumn { column, .. } if column == "mass_err_hi")
        );
        let err = e(
            table(&["id", "class", "mass[furlong]", "mass_err"], &[]),
            None,
        );
        let msg = err.to_string();
        assert!(
            msg.contains("f.csv") && msg.contains("mass") && msg.contains("furlong"),
            "{msg}"
        );
        let err = e(
            table(&["id", "class", "mass", "mass_err", "mass"], &[]),
            None,
        );
        assert!(matches!(err, CatalogueError::DuplicateColumn { .. }));
        let map = ColumnMap::from_toml_str("[columns]\nradius = \"r\"\n", "m.toml").unwrap();
        let err = e(table(&["id", "class", "mass", "mass_err"], &[]), Some(&map));
        assert!(err.to_string().contains("`r`"), "{err}");
    }

    #[test]
    fn malformed_rows_are_quarantined_with_reader_reason() {
        let mut t = table(
            &["id", "class", "mass", "mass_err"],
            &[
                &["a", "white_dwarf", "0.6", "0.1"],
                &["b", "white_dwarf", "", ""],
            ],
        );
        t.malformed.push((2, "expected 4 fields, found 2".into()));
        let got = reasons(&t, None);
        assert_eq!(
            got,
            vec![(
                2,
                "(row)".to_string(),
                "malformed row: expected 4 fields, found 2".to_string()
            )]
        );
    }

    #[test]
    fn reconciliation_check_is_typed() {
        let bad = CatalogueTally {
            path: "x.csv".into(),
            rows_in: 3,
            rows_accepted: 1,
            rows_quarantined: 1,
        };
        let e = check_reconciled(&bad).unwrap_err();
        assert!(e.is_internal());
        assert!(e.to_string().contains("x.csv"));
        let good = CatalogueTally {
            rows_quarantined: 2,
            ..bad
        };
        assert!(check_reconciled(&good).is_ok());
    }

    proptest::proptest! {
        #![proptest_config(proptest::prelude::ProptestConfig::with_cases(64))]
        /// Any mix of awkward cells: no panic, and rows in = accepted + quarantined.
        #[test]
        fn any_cells_reconcile(rows in proptest::collection::vec(
            proptest::collection::vec(proptest::sample::select(vec![
                "", " ", "a", "a", "b", "brown_dwarf", "white_dwarf", "hburning", "BD", "upper",
                "lower", "0", "-1", "0.05", "0.6", "1e400", "nan", "-inf", "2.5", "x,y", "1e-300",
                "-400",
            ]), 9),
            0..12,
        )) {
            let header = ["id", "class", "mass[log10(solMass)]", "mass_err_lo", "mass_err_hi",
                "mass_limit", "radius", "age", "mu_e"];
            let rows: Vec<Vec<&str>> = rows;
            let refs: Vec<&[&str]> = rows.iter().map(Vec::as_slice).collect();
            let t = table(&header, &refs);
            let (objs, q, tally) = vet_table("p.csv", &t, None).unwrap();
            proptest::prop_assert_eq!(tally.rows_in, objs.len() + q.len());
            for o in &objs {
                proptest::prop_assert!(o.mass_msun.is_finite() && o.mass_msun > 0.0);
                for e in [o.mass_err_lo_msun.get(), o.mass_err_hi_msun.get()].into_iter().flatten() {
                    proptest::prop_assert!(e.is_finite() && e > 0.0);
                }
            }
        }
    }

    proptest::proptest! {
        /// The shortcut trims what `str::trim` trims (the standard library is the reference),
        /// on text mixing ASCII, ASCII and Unicode white space and other characters.
        #[test]
        fn trim_shortcut_equals_str_trim(parts in proptest::collection::vec(
            proptest::sample::select(vec![
                "a", " ", "\t", "\n", "\u{a0}", "\u{2003}", "é", "~", "!", "\u{7f}", "\u{1}",
                "\u{200b}", "0.5",
            ]), 0..8)) {
            let text = parts.concat();
            proptest::prop_assert_eq!(trim(&text), text.trim());
        }
    }

    #[test]
    fn numeric_ids_print_as_integers() {
        assert_eq!(
            cell_text(CellRef::Number(12345.0)).as_deref(),
            Some("12345")
        );
        assert_eq!(cell_text(CellRef::Number(1.5)).as_deref(), Some("1.5"));
        assert_eq!(cell_text(CellRef::Text("  x ")).as_deref(), Some("x"));
    }

    #[test]
    fn lookalike_ids_are_both_quarantined() {
        // Issue 13 item 9: NFC vs NFD (Unicode Standard Annex #15), a zero-width space, a BOM
        // and a NUL make ids that read the same; an exact repeat keeps the first row.
        let t = table(
            &["id", "class", "mass", "mass_err"],
            &[
                &["Ren\u{e9}e", "brown_dwarf", "0.05", "0.01"],
                &["Rene\u{301}e", "brown_dwarf", "0.05", "0.01"],
                &["G\u{200b}1", "brown_dwarf", "0.05", "0.01"],
                &["G1", "brown_dwarf", "0.05", "0.01"],
                &["\u{feff}H\u{0}", "brown_dwarf", "0.05", "0.01"],
                &["H", "brown_dwarf", "0.05", "0.01"],
                &["K", "brown_dwarf", "0.05", "0.01"],
                &["K", "brown_dwarf", "0.05", "0.01"],
                &["\u{200b}", "brown_dwarf", "0.05", "0.01"],
                &["\u{200d}", "brown_dwarf", "0.05", "0.01"],
            ],
        );
        let got = reasons(&t, None);
        let rows: Vec<(usize, &str)> = got.iter().map(|(r, _, w)| (*r, w.as_str())).collect();
        let mut want: Vec<(usize, &str)> = (1..=6).map(|r| (r, reason::LOOKALIKE_ID)).collect();
        want.push((8, reason::DUPLICATE_ID));
        want.push((9, reason::MISSING_ID));
        want.push((10, reason::MISSING_ID));
        assert_eq!(rows, want);
        assert_eq!(normalise_id(" Rene\u{301}e\u{200b} "), "Ren\u{e9}e");
    }

    #[test]
    fn id_table_finds_every_id_across_growth() {
        // Open addressing must find each recorded id after every regrowth, and no other
        // (common practice, no source). Ids that count up, as in the scale catalogue.
        let mut t = IdTable::default();
        for k in 0..20_000 {
            let id = format!("SC-{k:07}");
            assert_eq!(t.find(&id), None);
            let first_raw = (k % 1000 == 0).then(|| format!(" {id}").into());
            assert_eq!(t.find_or_insert(&id, || first_raw), None);
        }
        for k in 0..20_000 {
            let id = format!("SC-{k:07}");
            let at = t.find(&id).unwrap();
            assert_eq!(t.key(at), id);
            assert_eq!(t.first_raw.contains_key(&at), k % 1000 == 0);
        }
        // A second sighting is found, not recorded again.
        let at = t.find("SC-0000042").unwrap();
        assert_eq!(t.find_or_insert("SC-0000042", || None), Some(at));
        assert_eq!(t.entries.len(), 20_000);
        assert_eq!(t.find("SC-0020000"), None);
        assert_eq!(t.find(""), None);
    }

    #[test]
    fn one_file_column_behind_two_canonical_columns_is_refused() {
        let t = table(&["id", "class", "m"], &[&["a", "brown_dwarf", "0.05"]]);
        let map = ColumnMap::from_toml_str("[columns]\nmass = \"m\"\nmass_err = \"m\"\n", "m.toml")
            .unwrap();
        let err = vet_table("f.csv", &t, Some(&map)).unwrap_err();
        assert!(
            matches!(&err, CatalogueError::SharedColumn { first, second, column, .. }
                if first == "mass" && second == "mass_err" && column == "m"),
            "{err}"
        );
    }

    #[test]
    fn symmetric_and_split_errors_in_one_row_are_ambiguous() {
        let t = table(
            &[
                "id",
                "class",
                "mass",
                "mass_err",
                "mass_err_lo",
                "mass_err_hi",
            ],
            &[
                &["a", "brown_dwarf", "0.05", "0.01", "0.01", "0.02"],
                &["b", "brown_dwarf", "0.05", "0.01", "", ""],
                &["c", "brown_dwarf", "0.05", "", "0.01", "0.02"],
            ],
        );
        assert_eq!(
            reasons(&t, None),
            vec![(1, "mass_err".to_string(), reason::BOTH_ERRORS.to_string())]
        );
    }
}
