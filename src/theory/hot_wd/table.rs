//! The precomputed standard-gravity (ϒ = 0) radii of finite-temperature white dwarfs, with
//! O(1) interpolated lookups.
//!
//! One job: serve R_hot(M, Teff; core, envelope) and the zero-temperature Salpeter radius
//! R_cold(M; core) at ϒ = 0 per catalogue object and grid point, without a structure solve
//! (a lookup: about 0.3 µs, measured). A hot model takes about 0.1–0.3 s, so the grid is
//! solved once by `cargo run --example make_wd_hot_table` (the dev profile builds this crate at
//! opt-level 3; measured 140–185 s wall for the 1122 nodes on 2 busy cores), written to
//! `assets/wd_hot_table.csv` and embedded here with `include_str!`; a test re-solves a few
//! nodes and compares.
//!
//! Grid ([`TableSpec::standard`]): log₁₀ Teff from log₁₀ 4000 to 5 in 16 equal steps; masses
//! in steps of 0.05 M☉ over the range each core plausibly has, with an overlap so that a
//! catalogue may state a core slightly outside its usual mass range — He 0.15–0.55, C/O
//! 0.40–1.20, O/Ne 1.00–1.30 M☉ (pure C and pure O only through the full solve); thick and thin
//! hydrogen layers. Nodes without a model (no sign change of the central mismatch, e.g. 0.2 M☉
//! thick at 60 kK) are stored as such, never as numbers.
//!
//! Interpolation: ln R by 4 × 4-point Lagrange (bicubic) in (M, log₁₀ Teff), stencils shifted
//! inwards at the edges; where a stencil node has no model but the cell's four corners do, a
//! bilinear value is used. The per-lookup error estimate is |bicubic − bilinear| (bilinear:
//! the value itself when it is used). Measured against direct solves at mid-cell points (test
//! `mid_cell_survey`): see [`MID_CELL_ERROR_CO_ONE`] and [`MID_CELL_ERROR_HE`].
//!
//! ```
//! use dwarfbound::theory::hot_wd::{Core, Envelope, HotWdTable};
//!
//! let table = HotWdTable::standard().unwrap();
//! let r = table.radius_rsun(0.6, 20_000.0, Core::CarbonOxygen, Envelope::Thick).unwrap();
//! // 0.013458 R☉ by a direct solve (0.013516 with the lattice term alone, docs/white-dwarfs.md §7.2).
//! assert!((r.radius_rsun / 0.013458 - 1.0).abs() < 2e-3);
//! assert!(r.radius_rsun > r.cold_radius_rsun);
//! ```

use std::sync::OnceLock;

use crate::theory::hot_wd::shoot::{hot_model, HotOptions};
use crate::theory::hot_wd::{cold::ColdWd, Core, Electrostatics, Envelope, HotWdError};

/// Largest relative interpolation error of R_hot at mid-cell points (mass and log Teff both
/// half-way between nodes) against direct solves, for C/O and O/Ne cores at Teff ≤ 60 kK
/// (measured by the ignored `mid_cell_survey` test: 3.6e-4 over every second mass cell and
/// every Teff cell of both envelopes). Above 60 kK the low-mass C/O models swell fast and the
/// error reaches 3e-2 (0.425 M☉ thick, 90 kK); the per-lookup estimate covered it.
pub const MID_CELL_ERROR_CO_ONE: f64 = 4e-4;

/// As [`MID_CELL_ERROR_CO_ONE`] for helium cores where the bicubic stencil is complete: 5.7e-3
/// at worst (0.175 M☉ thick H, 22 kK, where R is already 1.6 R_cold), ≤ 1.3e-3 from 0.25 M☉ up.
/// Next to no-model nodes (bilinear cells) errors reach 13 % (0.175 M☉ thin, 40 kK): there the
/// estimate is the cell's spread, which covered every surveyed point.
pub const MID_CELL_ERROR_HE: f64 = 6e-3;

/// The committed table (regenerate with `cargo run --example make_wd_hot_table`).
const TABLE_CSV: &str = include_str!("../../../assets/wd_hot_table.csv");

/// Nodes of the table: the Teff axis and one mass axis per tabulated core.
#[derive(Debug, Clone, PartialEq)]
pub struct TableSpec {
    /// log₁₀ Teff of the first node.
    pub log10_teff_min: f64,
    /// log₁₀ Teff of the last node.
    pub log10_teff_max: f64,
    /// Number of Teff nodes.
    pub teff_count: usize,
    /// Mass step, M☉.
    pub mass_step: f64,
    /// Per tabulated core: (core, first mass, number of masses).
    pub cores: Vec<(Core, f64, usize)>,
}

impl TableSpec {
    /// The grid of the committed table (see the module paragraph).
    pub fn standard() -> Self {
        Self {
            log10_teff_min: 4000f64.log10(),
            log10_teff_max: 5.0,
            teff_count: 17,
            mass_step: 0.05,
            cores: vec![
                (Core::Helium, 0.15, 9),
                (Core::CarbonOxygen, 0.40, 17),
                (Core::OxygenNeon, 1.00, 7),
            ],
        }
    }

    /// log₁₀ Teff of node j.
    pub fn log10_teff(&self, j: usize) -> f64 {
        self.log10_teff_min
            + (self.log10_teff_max - self.log10_teff_min) * j as f64 / (self.teff_count - 1) as f64
    }

    /// Mass of node i of a core starting at `m0`, rounded to 1e-9 M☉.
    pub fn mass(&self, m0: f64, i: usize) -> f64 {
        ((m0 + self.mass_step * i as f64) * 1e9).round() / 1e9
    }
}

/// One lookup.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TableRadius {
    /// R_hot(M, Teff; core, envelope) at ϒ = 0, R☉.
    pub radius_rsun: f64,
    /// R_cold(M; core) with the Salpeter term at ϒ = 0, R☉ (so R_hot/R_cold is at hand).
    pub cold_radius_rsun: f64,
    /// Estimated interpolation error of `radius_rsun`, R☉ (see the module paragraph).
    pub interpolation_error_rsun: f64,
    /// Whether the bicubic stencil was complete (false: bilinear next to a no-model node,
    /// where R rises steeply and the error is larger).
    pub bicubic: bool,
}

/// One core and envelope on the grid: ln R per (mass, Teff) node, `None` where no model.
#[derive(Debug, Clone, PartialEq)]
struct Block {
    core: Core,
    envelope: Envelope,
    m0: f64,
    masses: usize,
    ln_r: Vec<Option<f64>>,
    ln_r_cold: Vec<f64>,
}

/// The standard-gravity hot-radius table (see the module paragraph).
#[derive(Debug, Clone, PartialEq)]
pub struct HotWdTable {
    spec: TableSpec,
    blocks: Vec<Block>,
}

/// 4-point Lagrange weights at fractional position `t` of a stencil starting at node s,
/// for the point at x (in node units, x = i + t).
fn lagrange4(x: f64, s: usize) -> [f64; 4] {
    let mut w = [1.0; 4];
    for (j, wj) in w.iter_mut().enumerate() {
        for l in 0..4 {
            if l != j {
                *wj *= (x - (s + l) as f64) / (j as f64 - l as f64);
            }
        }
    }
    w
}

/// Cell index and stencil start for position x in [0, n − 1] on n nodes.
fn cell(x: f64, n: usize) -> (usize, usize) {
    let i = (x.floor().max(0.0) as usize).min(n - 2);
    let s = i.saturating_sub(1).min(n.saturating_sub(4));
    (i, s)
}

impl Block {
    fn at(&self, i: usize, j: usize, nt: usize) -> Option<f64> {
        self.ln_r[i * nt + j]
    }
}

impl HotWdTable {
    /// The committed table, parsed once.
    pub fn standard() -> Result<&'static HotWdTable, HotWdError> {
        static T: OnceLock<Result<HotWdTable, HotWdError>> = OnceLock::new();
        T.get_or_init(|| HotWdTable::parse(TABLE_CSV, TableSpec::standard()))
            .as_ref()
            .map_err(Clone::clone)
    }

    /// The grid of this table.
    pub fn spec(&self) -> &TableSpec {
        &self.spec
    }

    /// Parses the CSV written by [`generate_csv`] for the grid `spec`.
    pub fn parse(text: &str, spec: TableSpec) -> Result<HotWdTable, HotWdError> {
        let bad = |why: String| HotWdError::Numerical(format!("white-dwarf table: {why}"));
        let nt = spec.teff_count;
        let mut blocks = Vec::new();
        for &(core, m0, masses) in &spec.cores {
            for envelope in Envelope::ALL {
                blocks.push(Block {
                    core,
                    envelope,
                    m0,
                    masses,
                    ln_r: vec![None; masses * nt],
                    ln_r_cold: vec![f64::NAN; masses],
                });
            }
        }
        let mut filled = 0usize;
        for line in text.lines().filter(|l| !l.starts_with('#')).skip(1) {
            let f: Vec<&str> = line.split(',').collect();
            if f.len() != 8 {
                return Err(bad(format!("row with {} fields: {line}", f.len())));
            }
            let core: Core = f[0].parse().map_err(|e| bad(format!("{e}")))?;
            let envelope: Envelope = f[1].parse().map_err(|e| bad(format!("{e}")))?;
            let num = |s: &str| s.parse::<f64>().map_err(|_| bad(format!("number '{s}'")));
            let (mass, teff) = (num(f[2])?, num(f[3])?);
            let block = blocks
                .iter_mut()
                .find(|b| b.core == core && b.envelope == envelope)
                .ok_or_else(|| bad(format!("untabulated core {}", core.name())))?;
            let i = ((mass - block.m0) / spec.mass_step).round();
            let j = ((teff.log10() - spec.log10_teff_min)
                / (spec.log10_teff_max - spec.log10_teff_min)
                * (nt - 1) as f64)
                .round();
            if !(i >= 0.0 && (i as usize) < block.masses && j >= 0.0 && (j as usize) < nt) {
                return Err(bad(format!("node off the grid: {line}")));
            }
            let (i, j) = (i as usize, j as usize);
            block.ln_r_cold[i] = num(f[5])?.ln();
            block.ln_r[i * nt + j] = if f[7] == "ok" {
                Some(num(f[4])?.ln())
            } else {
                None
            };
            filled += 1;
        }
        let expected: usize = blocks.iter().map(|b| b.masses * nt).sum();
        if filled != expected
            || blocks
                .iter()
                .any(|b| b.ln_r_cold.iter().any(|v| !v.is_finite()))
        {
            return Err(bad(format!("{filled} rows for {expected} nodes")));
        }
        Ok(HotWdTable { spec, blocks })
    }

    fn block(&self, core: Core, envelope: Envelope) -> Result<&Block, HotWdError> {
        self.blocks
            .iter()
            .find(|b| b.core == core && b.envelope == envelope)
            .ok_or(HotWdError::InvalidParameter {
                name: "core",
                value: f64::NAN,
                why: "this core is not tabulated (pure C and O: use the full solve)",
            })
    }

    /// The mass range (M☉) tabulated for a core, if it is tabulated.
    pub fn mass_range_msun(&self, core: Core) -> Option<(f64, f64)> {
        self.spec
            .cores
            .iter()
            .find(|c| c.0 == core)
            .map(|&(_, m0, n)| (m0, self.spec.mass(m0, n - 1)))
    }

    /// R_cold(M; core) at ϒ = 0 with the Salpeter term (cubic in M), R☉.
    pub fn cold_radius_rsun(&self, mass_msun: f64, core: Core) -> Result<f64, HotWdError> {
        let b = self.block(core, Envelope::Thick)?;
        let x = self.mass_position(b, mass_msun)?;
        let (_, s) = cell(x, b.masses);
        let w = lagrange4(x, s);
        Ok((0..4).map(|k| w[k] * b.ln_r_cold[s + k]).sum::<f64>().exp())
    }

    fn mass_position(&self, b: &Block, mass_msun: f64) -> Result<f64, HotWdError> {
        let max = self.spec.mass(b.m0, b.masses - 1);
        if !(mass_msun >= b.m0 - 1e-12 && mass_msun <= max + 1e-12) {
            return Err(HotWdError::OutsideTable {
                name: "mass_msun",
                value: mass_msun,
                min: b.m0,
                max,
            });
        }
        Ok(((mass_msun - b.m0) / self.spec.mass_step).clamp(0.0, (b.masses - 1) as f64))
    }

    /// R_hot(M, Teff; core, envelope) at ϒ = 0 with R_cold and an error estimate (O(1): direct
    /// index arithmetic on the uniform grid, at most 16 nodes read).
    pub fn radius_rsun(
        &self,
        mass_msun: f64,
        teff_k: f64,
        core: Core,
        envelope: Envelope,
    ) -> Result<TableRadius, HotWdError> {
        let b = self.block(core, envelope)?;
        let x = self.mass_position(b, mass_msun)?;
        let sp = &self.spec;
        let nt = sp.teff_count;
        let lt = teff_k.log10();
        let tmin = 10f64.powf(sp.log10_teff_min);
        let tmax = 10f64.powf(sp.log10_teff_max);
        if !(teff_k >= tmin * (1.0 - 1e-12) && teff_k <= tmax * (1.0 + 1e-12)) {
            return Err(HotWdError::OutsideTable {
                name: "teff_k",
                value: teff_k,
                min: tmin,
                max: tmax,
            });
        }
        let y = ((lt - sp.log10_teff_min) / (sp.log10_teff_max - sp.log10_teff_min)
            * (nt - 1) as f64)
            .clamp(0.0, (nt - 1) as f64);
        let (i, si) = cell(x, b.masses);
        let (j, sj) = cell(y, nt);
        let no_model = HotWdError::NoTabulatedModel { mass_msun, teff_k };
        // Bilinear on the cell.
        let (tx, ty) = (x - i as f64, y - j as f64);
        let mut bilinear = 0.0;
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for (di, wx) in [(0, 1.0 - tx), (1, tx)] {
            for (dj, wy) in [(0, 1.0 - ty), (1, ty)] {
                let v = b.at(i + di, j + dj, nt).ok_or(no_model.clone())?;
                bilinear += wx * wy * v;
                lo = lo.min(v);
                hi = hi.max(v);
            }
        }
        let (wx, wy) = (lagrange4(x, si), lagrange4(y, sj));
        let mut cubic = Some(0.0);
        for (a, wa) in wx.iter().enumerate() {
            for (c, wc) in wy.iter().enumerate() {
                cubic = match (cubic, b.at(si + a, sj + c, nt)) {
                    (Some(acc), Some(v)) => Some(acc + wa * wc * v),
                    _ => None,
                };
            }
        }
        let cold = self.cold_radius_rsun(mass_msun, core)?;
        // Bilinear fallback: the spread of the cell's corners bounds the error of a value
        // that is monotone across the cell (measured: it covered every surveyed point).
        let (value, err) = match cubic {
            Some(c) => (c.exp(), (c.exp() - bilinear.exp()).abs()),
            None => (bilinear.exp(), hi.exp() - lo.exp()),
        };
        Ok(TableRadius {
            radius_rsun: value,
            cold_radius_rsun: cold,
            interpolation_error_rsun: err,
            bicubic: cubic.is_some(),
        })
    }
}

/// One node of the table: (core, envelope, mass, Teff).
pub type Node = (Core, Envelope, f64, f64);

/// Every node of `spec`, in file order.
pub fn nodes(spec: &TableSpec) -> Vec<Node> {
    let mut out = Vec::new();
    for &(core, m0, n) in &spec.cores {
        for envelope in Envelope::ALL {
            for i in 0..n {
                for j in 0..spec.teff_count {
                    let teff = (10f64.powf(spec.log10_teff(j)) * 1e6).round() / 1e6;
                    out.push((core, envelope, spec.mass(m0, i), teff));
                }
            }
        }
    }
    out
}

/// One CSV row for a node: the full hot solve at ϒ = 0 and the cold Salpeter radius.
pub fn solve_node(node: &Node) -> Result<String, HotWdError> {
    let &(core, envelope, mass, teff) = node;
    let cold =
        ColdWd::new(&core.composition(), 0.0, Electrostatics::default())?.model_of_mass(mass)?;
    let (r, tc, status) = match hot_model(mass, teff, core, envelope, 0.0, &HotOptions::default()) {
        Ok(m) => (
            format!("{:.10e}", m.radius_rsun),
            format!("{:.6e}", m.core_temperature_k),
            "ok",
        ),
        Err(e @ (HotWdError::NoBracket { .. } | HotWdError::DenominatorVanishes { .. })) => {
            (String::new(), String::new(), e.code())
        }
        Err(e) => return Err(e),
    };
    Ok(format!(
        "{},{},{:.2},{:.6},{r},{:.10e},{tc},{status}",
        core.name(),
        envelope.name(),
        mass,
        teff,
        cold.radius_rsun
    ))
}

/// The whole CSV file for `spec` (rows solved in parallel; the output does not depend on the
/// number of threads).
pub fn generate_csv(spec: &TableSpec) -> Result<String, HotWdError> {
    use rayon::prelude::*;
    let rows: Result<Vec<String>, HotWdError> = nodes(spec).par_iter().map(solve_node).collect();
    let mut out = String::new();
    out.push_str("# Finite-temperature white-dwarf radii at standard gravity (Upsilon = 0).\n");
    out.push_str("# Written by dwarfbound's `cargo run --example make_wd_hot_table` (src/theory/hot_wd/table.rs, generate_csv).\n");
    out.push_str("# Settings: HotOptions::default() (DOP853 rtol 1e-9, Salpeter 1961 lattice, exchange and Thomas-Fermi terms, H layer thick 1e-4 / thin 1e-10 of M, He layer to q = 1e-2, isothermal core below), TableSpec::standard().\n");
    out.push_str("# radius_rsun: photospheric radius; cold_radius_rsun: T = 0 with the same electrostatic terms; status: ok or why there is no model.\n");
    out.push_str(
        "core,envelope,mass_msun,teff_k,radius_rsun,cold_radius_rsun,core_temperature_k,status\n",
    );
    for r in rows? {
        out.push_str(&r);
        out.push('\n');
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn committed_table_parses_and_matches_fresh_solves() {
        // Committed fixture written by examples/make_wd_hot_table.rs: re-solving nodes must
        // give the stored numbers (deterministic code, 11 significant digits stored).
        let table = HotWdTable::standard().unwrap();
        let spec = table.spec();
        let all = nodes(spec);
        let picks = [3usize, all.len() / 2 + 5, all.len() - 40];
        let lines: Vec<&str> = TABLE_CSV
            .lines()
            .filter(|l| !l.starts_with('#'))
            .skip(1)
            .collect();
        for k in picks {
            let fresh = solve_node(&all[k]).unwrap();
            let (a, b): (Vec<&str>, Vec<&str>) =
                (fresh.split(',').collect(), lines[k].split(',').collect());
            assert_eq!(a[..4], b[..4]);
            assert_eq!(a[7], b[7]);
            for c in [4, 5] {
                if !a[c].is_empty() {
                    let (x, y): (f64, f64) = (a[c].parse().unwrap(), b[c].parse().unwrap());
                    assert!((x / y - 1.0).abs() < 1e-6, "{}", lines[k]);
                }
            }
        }
    }

    #[test]
    fn nodes_are_reproduced_and_no_model_is_typed() {
        let table = HotWdTable::standard().unwrap();
        // At a node the interpolant returns the node (Lagrange interpolation, closed form).
        let r = table
            .radius_rsun(
                0.6,
                10f64.powf(table.spec().log10_teff(8)),
                Core::CarbonOxygen,
                Envelope::Thick,
            )
            .unwrap();
        assert!(r.interpolation_error_rsun < 1e-9);
        // 0.2 M☉ He, thick H, 100 kK: no model (spec §7.2 has none already at 60 kK).
        let e = table
            .radius_rsun(0.2, 1e5, Core::Helium, Envelope::Thick)
            .unwrap_err();
        assert_eq!(e.code(), "no-tabulated-model");
        assert_eq!(
            table
                .radius_rsun(0.9, 1e4, Core::Helium, Envelope::Thick)
                .unwrap_err()
                .code(),
            "outside-table"
        );
        assert_eq!(
            table
                .radius_rsun(0.6, 3e3, Core::CarbonOxygen, Envelope::Thick)
                .unwrap_err()
                .code(),
            "outside-table"
        );
        // Cold radius: the direct zero-temperature solve with the same electrostatic terms (its
        // agreement with Hamada & Salpeter 1961 is tested in cold.rs), at a node and between.
        for (m, core) in [
            (0.6, Core::CarbonOxygen),
            (0.2, Core::Helium),
            (0.625, Core::CarbonOxygen),
        ] {
            let c = table.cold_radius_rsun(m, core).unwrap();
            let direct = crate::theory::hot_wd::cold_salpeter_radius_rsun(m, core, 0.0).unwrap();
            assert!((c / direct - 1.0).abs() < 1e-6, "{m}: {c} vs {direct}");
        }
    }

    #[test]
    fn hot_grid_rows_from_the_table() {
        // Independent scipy integration (docs/white-dwarfs.md, §7.2 table), on and off nodes.
        // That integration has the lattice term only; the table also carries exchange and
        // Thomas–Fermi, so it is compared through the shift those terms make in a direct solve
        // at the same point (shoot.rs reproduces the lattice-only values to 1e-4).
        let table = HotWdTable::standard().unwrap();
        let lattice = HotOptions {
            electrostatics: Electrostatics::Lattice,
            ..HotOptions::default()
        };
        for (m, t, core, env, r_ref) in [
            (0.6, 10e3, Core::CarbonOxygen, Envelope::Thick, 0.012904),
            (0.6, 40e3, Core::CarbonOxygen, Envelope::Thick, 0.014776),
            (0.3, 20e3, Core::Helium, Envelope::Thin, 0.021927),
            (1.0, 60e3, Core::CarbonOxygen, Envelope::Thick, 0.008825),
        ] {
            let r = table.radius_rsun(m, t, core, env).unwrap();
            let full = hot_model(m, t, core, env, 0.0, &HotOptions::default()).unwrap();
            let lat = hot_model(m, t, core, env, 0.0, &lattice).unwrap();
            let r_ref = r_ref * full.radius_rsun / lat.radius_rsun;
            let dev = (r.radius_rsun / r_ref - 1.0).abs();
            // Interpolation bound plus the reference's rounding (5e-7 R☉ at 6 decimals) and the
            // shoot's agreement with it (1e-4).
            let bound = if core == Core::Helium {
                MID_CELL_ERROR_HE
            } else {
                MID_CELL_ERROR_CO_ONE
            };
            assert!(dev < bound + 5e-7 / r_ref + 1e-4, "{m} {t}: {dev}");
        }
    }

    #[test]
    fn mid_cell_interpolation_error() {
        // Direct solves (this module's own shooting, checked against the spec in shoot.rs) at
        // mid-cell points; the bounds are the ones measured by `mid_cell_survey`.
        use rayon::prelude::*;
        let table = HotWdTable::standard().unwrap();
        let sp = table.spec();
        let mid_t = |j: usize| 10f64.powf(0.5 * (sp.log10_teff(j) + sp.log10_teff(j + 1)));
        let points = [
            (0.625, mid_t(6), Core::CarbonOxygen, Envelope::Thick),
            (0.325, mid_t(10), Core::Helium, Envelope::Thin),
            (1.025, mid_t(3), Core::CarbonOxygen, Envelope::Thin),
        ];
        let errs: Vec<(Core, f64, f64)> = points
            .par_iter()
            .map(|&(m, t, core, env)| {
                let direct = hot_model(m, t, core, env, 0.0, &HotOptions::default())
                    .unwrap()
                    .radius_rsun;
                let r = table.radius_rsun(m, t, core, env).unwrap();
                (
                    core,
                    (r.radius_rsun / direct - 1.0).abs(),
                    r.interpolation_error_rsun / direct,
                )
            })
            .collect();
        for (core, err, est) in errs {
            let bound = if core == Core::Helium {
                MID_CELL_ERROR_HE
            } else {
                MID_CELL_ERROR_CO_ONE
            };
            assert!(err < bound, "{err}");
            assert!(est >= err && est < 10.0 * bound, "{err} {est}");
        }
    }

    /// Survey of the interpolation error over mid-cell points of every block (every second
    /// mass cell, every Teff cell; several minutes on 2 cores). Run with
    /// `cargo test --lib hot_wd::table::tests::mid_cell_survey -- --ignored --nocapture`.
    #[test]
    #[ignore]
    fn mid_cell_survey() {
        use rayon::prelude::*;
        let table = HotWdTable::standard().unwrap();
        let sp = table.spec().clone();
        let mut pts = Vec::new();
        for &(core, m0, n) in &sp.cores {
            for env in Envelope::ALL {
                for i in (0..n - 1).step_by(2) {
                    for j in 0..sp.teff_count - 1 {
                        let m = m0 + sp.mass_step * (i as f64 + 0.5);
                        let t = 10f64.powf(0.5 * (sp.log10_teff(j) + sp.log10_teff(j + 1)));
                        pts.push((core, env, m, t));
                    }
                }
            }
        }
        let res: Vec<_> = pts
            .par_iter()
            .map(|&(core, env, m, t)| {
                let d = hot_model(m, t, core, env, 0.0, &HotOptions::default());
                let r = table.radius_rsun(m, t, core, env);
                (core, env, m, t, d, r)
            })
            .collect();
        let mut worst = [[0.0f64; 3]; 3];
        let mut under = 0;
        for (core, env, m, t, d, r) in res {
            match (d, r) {
                (Ok(d), Ok(r)) => {
                    let err = (r.radius_rsun / d.radius_rsun - 1.0).abs();
                    let k = if t > 6e4 {
                        2
                    } else if t > 3e4 {
                        1
                    } else {
                        0
                    };
                    let c = if !r.bicubic {
                        2
                    } else if core == Core::Helium {
                        0
                    } else {
                        1
                    };
                    worst[c][k] = worst[c][k].max(err);
                    // The estimate may fall short where the error is tiny (cubic and bilinear
                    // agreeing by chance); count only shortfalls on errors above 1e-3.
                    if r.interpolation_error_rsun < err * d.radius_rsun && err > 1e-3 {
                        under += 1;
                    }
                    if err > 1e-3 {
                        println!("{core:?} {env:?} {m:.3} {t:.0}: {err:.2e} (estimate {:.2e}, bicubic {})", r.interpolation_error_rsun / d.radius_rsun, r.bicubic);
                    }
                }
                (d, r) => println!(
                    "{core:?} {env:?} {m:.3} {t:.0}: direct {:?} table {:?}",
                    d.map(|x| x.radius_rsun),
                    r.map(|x| x.radius_rsun)
                ),
            }
        }
        for (name, w) in ["He bicubic", "C/O and O/Ne bicubic", "bilinear fallback"]
            .iter()
            .zip(worst)
        {
            println!(
                "{name}: worst relative error Teff ≤ 30 kK {:.2e}, 30–60 kK {:.2e}, > 60 kK {:.2e}",
                w[0], w[1], w[2]
            );
        }
        println!("estimate below the error at {under} points");
        assert_eq!(under, 0);
    }
}
