//! The column map: how a user's catalogue columns, units and class labels map to ours.
//!
//! A map is a small TOML file given with `--map` (or embedded in a run config). Matching is
//! exact, never fuzzy: a misspelt key is an error naming the key, because a silently ignored
//! line would vet the wrong column. Columns of the file that are neither mapped nor canonical
//! are ignored. An empty unit (`mass = ""`) means the column's default unit, exactly as an
//! empty unit in a file's header does. Two canonical columns mapped to one file column are
//! refused when the file is vetted (the file's column names are needed to see it).
//!
//! ```
//! use dwarfbound::catalogue::colmap::ColumnMap;
//! let map = ColumnMap::from_toml_str(r#"
//! [columns]
//! mass = "m_jup"
//! [units]
//! mass = "jupiterMass"
//! [classes]
//! "BD" = "brown_dwarf"
//! "#, "map.toml").unwrap();
//! assert_eq!(map.file_column("mass"), "m_jup");
//! assert_eq!(map.file_column("id"), "id"); // unmapped: the canonical name itself
//! ```

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use super::error::CatalogueError;
use super::units::{self, Quantity};

/// Canonical column names of the README, in output order.
pub const CANONICAL_COLUMNS: [&str; 21] = [
    "id",
    "class",
    "mass",
    "mass_err",
    "mass_err_lo",
    "mass_err_hi",
    "mass_limit",
    "radius",
    "radius_err",
    "age",
    "age_err",
    "rotation_period",
    "rotation_period_err",
    "mu_e",
    "teff",
    "teff_err",
    "core",
    "envelope",
    "radius_model",
    "mass_method",
    "ref",
];

/// Canonical class labels.
pub const CANONICAL_CLASSES: [&str; 3] = ["hburning", "brown_dwarf", "white_dwarf"];

/// The quantity (and so the unit dimension) of a canonical column; `None` for text columns.
pub fn column_quantity(canonical: &str) -> Option<Quantity> {
    Some(match canonical {
        "mass" | "mass_err" | "mass_err_lo" | "mass_err_hi" => Quantity::Mass,
        "radius" | "radius_err" | "radius_model" => Quantity::Radius,
        "teff" | "teff_err" => Quantity::Temperature,
        "age" | "age_err" => Quantity::Age,
        "rotation_period" | "rotation_period_err" => Quantity::RotationPeriod,
        "mu_e" => Quantity::Dimensionless,
        _ => return None,
    })
}

/// A validated column map.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ColumnMap {
    /// Where the map came from (for messages).
    pub source: PathBuf,
    /// Canonical column → column name in the file.
    pub columns: BTreeMap<String, String>,
    /// Canonical column → unit string (already checked to parse for that column).
    pub units: BTreeMap<String, String>,
    /// Class label in the file → canonical class label.
    pub classes: BTreeMap<String, String>,
    /// FITS HDU or VOTable TABLE to read, by name or 0-based index.
    pub table: Option<String>,
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct RawMap {
    #[serde(default)]
    columns: BTreeMap<String, String>,
    #[serde(default)]
    units: BTreeMap<String, String>,
    #[serde(default)]
    classes: BTreeMap<String, String>,
    #[serde(default)]
    options: Option<RawOptions>,
}

#[derive(serde::Deserialize)]
#[serde(deny_unknown_fields)]
struct RawOptions {
    table: Option<TableSel>,
}

#[derive(serde::Deserialize)]
#[serde(untagged)]
enum TableSel {
    Name(String),
    Index(u64),
}

impl ColumnMap {
    /// Reads and validates a map file.
    pub fn load(path: &Path) -> Result<ColumnMap, CatalogueError> {
        let text = std::fs::read_to_string(path).map_err(|e| CatalogueError::BadMap {
            path: path.to_path_buf(),
            reason: format!("cannot read: {e}"),
        })?;
        Self::from_toml_str(&text, path)
    }

    /// Parses and validates a map from TOML text; `source` names it in messages.
    pub fn from_toml_str(
        text: &str,
        source: impl AsRef<Path>,
    ) -> Result<ColumnMap, CatalogueError> {
        let path = source.as_ref().to_path_buf();
        let bad = |reason: String| CatalogueError::BadMap {
            path: path.clone(),
            reason,
        };
        let raw: RawMap = toml::from_str(text).map_err(|e| {
            let line = e
                .span()
                .map(|s| text[..s.start.min(text.len())].matches('\n').count() + 1);
            let msg = e.message().replace('\n', " ");
            match line {
                Some(l) => bad(format!("line {l}: {msg}")),
                None => bad(msg),
            }
        })?;
        for (k, v) in &raw.columns {
            if !CANONICAL_COLUMNS.contains(&k.as_str()) {
                return Err(bad(format!(
                    "[columns]: `{k}` is not a canonical column (expected one of {})",
                    CANONICAL_COLUMNS.join(", ")
                )));
            }
            if v.is_empty() {
                return Err(bad(format!(
                    "[columns]: `{k}` maps to an empty column name"
                )));
            }
        }
        // An empty unit means "the default unit", as an empty `[]` or absent unit in a file's
        // header does: the same spelling means the same thing wherever it is written.
        let mut raw = raw;
        raw.units.retain(|_, v| !v.trim().is_empty());
        for (k, v) in &raw.units {
            if !CANONICAL_COLUMNS.contains(&k.as_str()) {
                return Err(bad(format!("[units]: `{k}` is not a canonical column")));
            }
            let Some(q) = column_quantity(k) else {
                return Err(bad(format!("[units]: column `{k}` takes no unit")));
            };
            let parsed = if k.contains("_err") {
                units::parse_error_unit(v, q)
            } else {
                units::parse_for(v, q)
            };
            if let Err(e) = parsed {
                return Err(CatalogueError::BadUnit {
                    path: path.clone(),
                    column: format!("[units] {k}"),
                    unit: v.clone(),
                    reason: e.0,
                });
            }
        }
        for (label, class) in &raw.classes {
            if !CANONICAL_CLASSES.contains(&class.as_str()) {
                return Err(bad(format!(
                    "[classes]: `{label}` maps to `{class}`, which is not a class (expected hburning, brown_dwarf or white_dwarf)"
                )));
            }
        }
        let table = raw.options.and_then(|o| o.table).map(|t| match t {
            TableSel::Name(s) => s,
            TableSel::Index(i) => i.to_string(),
        });
        Ok(ColumnMap {
            source: path,
            columns: raw.columns,
            units: raw.units,
            classes: raw.classes,
            table,
        })
    }

    /// The file's column name for a canonical column: the mapped name, or the canonical name.
    pub fn file_column<'a>(&'a self, canonical: &'a str) -> &'a str {
        self.columns
            .get(canonical)
            .map(String::as_str)
            .unwrap_or(canonical)
    }

    /// Translates a class label from the file to a canonical class label, if known.
    /// Canonical labels are always accepted as themselves.
    pub fn class_label<'a>(&'a self, label: &'a str) -> Option<&'a str> {
        if let Some(c) = self.classes.get(label) {
            return Some(c.as_str());
        }
        CANONICAL_CLASSES.iter().copied().find(|c| *c == label)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const FULL: &str = r#"
[columns]            # canonical name = column name in the file
id = "designation"
class = "type"
mass = "m_jup"
mass_err_lo = "m_lo"
mass_err_hi = "m_hi"
[units]
mass = "jupiterMass"
[classes]
"BD" = "brown_dwarf"
"VLM" = "hburning"
"WD" = "white_dwarf"
[options]
table = "CATALOG"
"#;

    #[test]
    fn full_map_parses() {
        let m = ColumnMap::from_toml_str(FULL, "m.toml").unwrap();
        assert_eq!(m.file_column("class"), "type");
        assert_eq!(m.file_column("radius"), "radius");
        assert_eq!(m.class_label("BD"), Some("brown_dwarf"));
        assert_eq!(m.class_label("white_dwarf"), Some("white_dwarf"));
        assert_eq!(m.class_label("bd"), None); // exact, never fuzzy
        assert_eq!(m.table.as_deref(), Some("CATALOG"));
        let m = ColumnMap::from_toml_str("[options]\ntable = 2\n", "m.toml").unwrap();
        assert_eq!(m.table.as_deref(), Some("2"));
    }

    fn err(text: &str) -> String {
        ColumnMap::from_toml_str(text, "m.toml")
            .unwrap_err()
            .to_string()
    }

    #[test]
    fn unknown_keys_are_named() {
        assert!(err("[colums]\nid = \"x\"\n").contains("colums"));
        assert!(err("[columns]\nmas = \"x\"\n").contains("`mas`"));
        assert!(err("[units]\nmas = \"solMass\"\n").contains("`mas`"));
        assert!(err("[units]\nid = \"solMass\"\n").contains("`id`"));
        assert!(err("[classes]\nBD = \"browndwarf\"\n").contains("browndwarf"));
        assert!(err("[options]\nhdu = 1\n").contains("hdu"));
        let e = err("[units]\nmass = \"km\"\n");
        assert!(e.contains("mass") && e.contains("km"), "{e}");
        let e = err("[columns]\nid = 3\n");
        assert!(e.contains("line 2"), "{e}");
    }

    #[test]
    fn empty_unit_means_default_as_in_a_header() {
        // Issue 13 item 9: `mass = ""` in a map means what `mass[]` means in a CSV header.
        let m =
            ColumnMap::from_toml_str("[units]\nmass = \"\"\nmass_err = \" \"\n", "m.toml").unwrap();
        assert!(m.units.is_empty());
    }
}
