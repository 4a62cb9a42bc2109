//! The theory seen as the comparator needs it: a finished [`TheoryGrid`] as a
//! [`BoundSurface`], and one theory point as a [`ReferencePoint`]. Adapters only; the grid and
//! the comparator each stay ignorant of the other.
//!
//! ```no_run
//! use dwarfbound::confront::engine::BoundSurface;
//! use dwarfbound::pipeline::surface::GridSurface;
//! use dwarfbound::theory::grid::{compute, GridOptions};
//! use dwarfbound::theory::point::TheorySettings;
//! use dwarfbound::theory::Axis;
//! let axis = Axis { start: -0.1, stop: 0.1, count: 3 };
//! let one = Axis { start: 0.0, stop: 0.0, count: 1 };
//! let grid = compute(axis, one, &TheorySettings::default(), &GridOptions::default()).unwrap();
//! let surface = GridSurface::new(&grid, None, Default::default());
//! assert_eq!(surface.upsilon().len(), 3);
//! ```

use rayon::prelude::*;

use crate::catalogue::{CatalogueObject, EnvelopeLabel, ObjectClass};
use crate::confront::engine::BoundSurface;
use crate::confront::tension::ReferencePoint;
use crate::confront::wd_radius::{ResolvedCore, WdQuery, WdRadiusModel, WdStandard};
use crate::pipeline::cache::{Cache, Lookup};
use crate::theory::grid::{self, TheoryGrid};
use crate::theory::hot_wd::{table::HotWdTable, tov, Core, Envelope};
use crate::theory::point::{Outcome, PointBounds};
use crate::theory::slow_rotation::SlowRotation;
use crate::theory::slow_rotation_table::SlowRotationTable;
use crate::theory::white_dwarf::{RadiusQueries, WdMassRadius};

/// The theory grid seen as the comparator's [`BoundSurface`] (same index order: τ outer, ϒ
/// inner).
pub struct GridSurface<'a> {
    grid: &'a TheoryGrid,
    upsilon: Vec<f64>,
    tau: Vec<f64>,
    /// The zero-temperature mass–radius table at ϒ = τ = 0 (the anchored ratio's denominator).
    standard_cold: Option<&'a WdMassRadius>,
    /// Which standard-gravity radius anchors the white-dwarf radius test.
    wd_model: WdRadiusModel,
    /// The first-order slow-rotation coefficients over the grid's (ϒ, τ) and the polytropic
    /// indices of spinning objects: a lattice solved one index slab at a time on first use
    /// (only runs with a slowly spinning object ask), interpolated at each point.
    slow: SlowRotationTable,
}

impl<'a> GridSurface<'a> {
    /// Wraps a complete grid. `standard_cold` is the zero-temperature table of the standard
    /// point (from the same structure solver as the grid's tables).
    pub fn new(
        grid: &'a TheoryGrid,
        standard_cold: Option<&'a WdMassRadius>,
        wd_model: WdRadiusModel,
    ) -> Self {
        let upsilon = (0..grid.upsilon.count)
            .map(|i| grid::grid_value(&grid.upsilon, i))
            .collect();
        let tau = (0..grid.tau.count)
            .map(|i| grid::grid_value(&grid.tau, i))
            .collect();
        Self {
            grid,
            upsilon,
            tau,
            standard_cold,
            wd_model,
            slow: SlowRotationTable::new(
                (grid.upsilon.start, grid.upsilon.stop),
                (grid.tau.start, grid.tau.stop),
                grid.settings.anisotropy,
            ),
        }
    }

    /// The zero-temperature mass–radius table at ϒ = τ = 0, if the run has one (the
    /// denominator of the anchored ratio, also used for the report's model curves).
    pub fn standard_cold(&self) -> Option<&'a WdMassRadius> {
        self.standard_cold
    }

    /// The finite-temperature standard radius of one query (Teff needed), with the thick–thin
    /// spread when the layer is not stated and d ln R/d Teff.
    fn hot_standard(table: &HotWdTable, q: &WdQuery, cold_rsun: f64) -> Option<WdStandard> {
        let teff = q.teff_k?;
        let core = hot_core(q.core);
        let at = |t: f64, e: Envelope| table.radius_rsun(q.mass_msun, t, core, e).ok();
        let envelope = match q.envelope {
            Some(EnvelopeLabel::Thin) => Envelope::Thin,
            _ => Envelope::Thick,
        };
        let main = at(teff, envelope)?;
        let envelope_fraction = match q.envelope {
            Some(_) => 0.0,
            None => at(teff, Envelope::Thin)
                .map(|thin| 0.5 * (main.radius_rsun - thin.radius_rsun).abs() / main.radius_rsun)
                .unwrap_or(0.0),
        };
        let dt = 0.01 * teff;
        let dln_r_dteff_per_k = match (at(teff + dt, envelope), at(teff - dt, envelope)) {
            (Some(a), Some(b)) => (a.radius_rsun.ln() - b.radius_rsun.ln()) / (2.0 * dt),
            _ => 0.0,
        };
        // The interpolation's own error (measured per lookup) is a theory error too.
        let interpolation = main.interpolation_error_rsun / main.radius_rsun;
        Some(WdStandard {
            radius_rsun: main.radius_rsun,
            cold_rsun,
            hot_over_cold: main.radius_rsun / main.cold_radius_rsun,
            envelope_fraction: envelope_fraction.hypot(interpolation),
            dln_r_dteff_per_k,
        })
    }
}

impl GridSurface<'_> {
    /// The general-relativistic correction R_TOV/R_Newton of the query's core at its mass (cold
    /// Salpeter matter, standard gravity; tabulated once per core), or `None` at or above the
    /// core's TOV maximum mass: the standard-gravity edge of the radius model. The modified
    /// theory still enters only through the Newtonian-order ratio R_c(M; ϒ, τ)/R_c(M; 0, 0).
    fn tov_factor(q: &WdQuery) -> Option<f64> {
        tov::tov_correction(hot_core(q.core))
            .ok()?
            .ratio(q.mass_msun)
    }
}

impl BoundSurface for GridSurface<'_> {
    fn upsilon(&self) -> &[f64] {
        &self.upsilon
    }
    fn tau(&self) -> &[f64] {
        &self.tau
    }
    fn mmhb_msun(&self, i: usize) -> Option<f64> {
        self.grid.point(i)?.mmhb.ok().map(|m| m.value_msun)
    }
    fn chandrasekhar_mu2_msun(&self, i: usize) -> Option<f64> {
        self.grid.point(i)?.chandrasekhar.ok().map(|c| c.value_msun)
    }
    fn wd_radii_rsun(&self, i: usize, queries: &[(f64, f64)]) -> Vec<Option<f64>> {
        match self.grid.wd_table(i) {
            // Batched: each table interval the queries touch is resampled once, then every
            // query is one polynomial evaluation (no root search per query).
            Some(Outcome::Ok(t)) => t.radii_rsun(queries),
            _ => vec![None; queries.len()],
        }
    }
    fn wd_radii_prepared(&self, i: usize, queries: &RadiusQueries) -> Vec<Option<f64>> {
        match self.grid.wd_table(i) {
            Some(Outcome::Ok(t)) => t.radii_rsun_prepared(queries),
            _ => vec![None; queries.pairs().len()],
        }
    }
    fn slow_rotation_n32(&self, i: usize) -> Option<SlowRotation> {
        // Only where the grid has an MMHB: the coefficients belong to that structure.
        self.grid.point(i)?.mmhb.ok()?;
        self.slow_rotation_at(i, 1.5)
    }
    fn slow_rotation_at(&self, i: usize, n: f64) -> Option<SlowRotation> {
        self.grid.point(i)?;
        let nu = self.upsilon.len();
        let (u, t) = (*self.upsilon.get(i % nu)?, *self.tau.get(i / nu)?);
        self.slow.at(u, t, n).ok()
    }
    fn wd_standard_radii(&self, queries: &[WdQuery]) -> Vec<Option<WdStandard>> {
        let Some(cold) = self.standard_cold else {
            return vec![None; queries.len()];
        };
        let hot = match self.wd_model {
            WdRadiusModel::Hot => HotWdTable::standard().ok(),
            WdRadiusModel::Cold => None,
        };
        // The same batched lookup as the grid's tables, so that the standard point's ratio is
        // exactly 1 where its table is the standard one.
        let colds = cold.radii_rsun(
            &queries
                .iter()
                .flat_map(|q| [(q.mass_msun, q.mu_e), (q.mass_msun, 2.0)])
                .collect::<Vec<_>>(),
        );
        queries
            .iter()
            .zip(colds.chunks(2))
            .map(|(q, c)| {
                let cold_rsun = c[0]?;
                match (self.wd_model, hot) {
                    (WdRadiusModel::Cold, _) => Some(WdStandard {
                        radius_rsun: cold_rsun,
                        cold_rsun,
                        hot_over_cold: 1.0,
                        envelope_fraction: 0.0,
                        dln_r_dteff_per_k: 0.0,
                    }),
                    (WdRadiusModel::Hot, Some(table)) => {
                        // The finite-temperature table is for μe = 2 compositions; another μe
                        // scales it as the zero-temperature model does.
                        let cold_mu2 = c[1]?;
                        let gr = Self::tov_factor(q)?;
                        Self::hot_standard(table, q, cold_rsun).map(|mut s| {
                            s.radius_rsun *= gr * cold_rsun / cold_mu2;
                            s
                        })
                    }
                    (WdRadiusModel::Hot, None) => None,
                }
            })
            .collect()
    }
}

/// The finite-temperature model's core of a resolved white-dwarf core.
fn hot_core(core: ResolvedCore) -> Core {
    match core {
        ResolvedCore::Helium => Core::Helium,
        ResolvedCore::CarbonOxygen => Core::CarbonOxygen,
        ResolvedCore::OxygenNeon => Core::OxygenNeon,
    }
}

/// Computes beforehand, in parallel, the standard-gravity white-dwarf tables that the radius
/// and spin tests of these objects will ask for: the finite-temperature table and one
/// relativistic correction per core (≈ 0.1 s each, [`tov::tov_correction`]). Otherwise the
/// first query of each core computes its correction on the comparison's single thread, one core
/// after another. Called alongside the theory grid; the values are the same whichever thread
/// computes them (each is cached once per process), so no output changes. With a theory
/// `cache`, each core's correction is read from it when present (bit for bit what was
/// computed; [`tov_cache`]) and stored after it is computed: on a nightly run with a cached
/// grid the corrections were the longest step before the comparison. Nothing to do for the
/// zero-temperature model, which asks for neither.
pub fn warm_standard_tables(
    objects: &[CatalogueObject],
    model: WdRadiusModel,
    cache: Option<&Cache>,
) {
    if model != WdRadiusModel::Hot {
        return;
    }
    let asked: Vec<Core> = Core::ALL
        .into_iter()
        .filter(|&c| {
            objects.iter().any(|o| {
                o.class == ObjectClass::WhiteDwarf
                    && (o.radius_rsun().is_some() || o.rotation_period_h().is_some())
                    && hot_core(ResolvedCore::resolve(o.core(), o.mass_msun)) == c
            })
        })
        .collect();
    if asked.is_empty() {
        return;
    }
    rayon::join(
        || {
            let _ = HotWdTable::standard();
        },
        || {
            asked.par_iter().for_each(|&c| match cache {
                Some(cache) => tov_cache::warm(cache, c),
                None => {
                    let _ = tov::tov_correction(c);
                }
            })
        },
    );
}

/// The relativistic corrections kept in the theory cache (subfolder `standard-tables`, one
/// entry per core and tool version; [`super::cache`] verifies each entry's checksum and
/// description). The payload is the correction's parts as little-endian `f64` bits, so a
/// correction read back is the one computed, to the bit.
pub mod tov_cache {
    use super::*;

    /// Subfolder of the theory cache that holds the standard-gravity tables.
    const FOLDER: &str = "standard-tables";
    /// First bytes of a payload (its format).
    const PAYLOAD_MAGIC: &[u8] = b"tov-correction-1\n";

    /// What determines an entry: the core and the tool version (as for the theory grids).
    fn description(core: Core) -> String {
        format!(
            r#"{{"entry":"tov_correction","core":"{core:?}","version":"{}"}}"#,
            env!("CARGO_PKG_VERSION")
        )
    }

    /// The correction's parts as bytes.
    pub fn encode(t: &tov::TovCorrection) -> Vec<u8> {
        let (_, max, rel, newt) = t.parts();
        let mut b = PAYLOAD_MAGIC.to_vec();
        b.extend_from_slice(&max.to_le_bytes());
        for seq in [rel, newt] {
            b.extend_from_slice(&(seq.len() as u64).to_le_bytes());
            for (x, y) in seq {
                b.extend_from_slice(&x.to_le_bytes());
                b.extend_from_slice(&y.to_le_bytes());
            }
        }
        b
    }

    /// The correction of `core` from bytes written by [`encode`]; `None` if they are not.
    pub fn decode(core: Core, bytes: &[u8]) -> Option<tov::TovCorrection> {
        let mut rest = bytes.strip_prefix(PAYLOAD_MAGIC)?;
        let mut take = || -> Option<[u8; 8]> {
            let (head, tail) = rest.split_first_chunk::<8>()?;
            rest = tail;
            Some(*head)
        };
        let max = f64::from_le_bytes(take()?);
        let mut seqs = Vec::with_capacity(2);
        for _ in 0..2 {
            let n = usize::try_from(u64::from_le_bytes(take()?)).ok()?;
            let mut seq = Vec::with_capacity(n.min(1 << 16));
            for _ in 0..n {
                let x = f64::from_le_bytes(take()?);
                seq.push((x, f64::from_le_bytes(take()?)));
            }
            seqs.push(seq);
        }
        let newt = seqs.pop()?;
        let rel = seqs.pop()?;
        if !rest.is_empty() {
            return None;
        }
        tov::TovCorrection::from_parts(core, max, rel, newt)
    }

    /// Makes the process's correction of `core` available: from `cache` when a verified entry
    /// is there, else computed and stored (best effort: a cache that cannot be written costs
    /// the computation next time, nothing else).
    pub fn warm(cache: &Cache, core: Core) {
        let cache = cache.subfolder(FOLDER);
        let description = description(core);
        let key = Cache::key(&description);
        if let Lookup::Hit(bytes) = cache.load(&key, &description) {
            if let Some(t) = decode(core, &bytes) {
                tov::provide(t);
                return;
            }
        }
        if let Ok(t) = tov::tov_correction(core) {
            let _ = cache.store(&key, &description, &encode(t));
        }
    }
}

/// The class bounds of one theory point (the MMHB and Chandrasekhar mass used against data).
pub fn class_bounds(p: &PointBounds) -> ReferencePoint {
    ReferencePoint {
        mmhb_msun: p.mmhb.ok().map(|m| m.value_msun),
        chandrasekhar_mu2_msun: p.chandrasekhar.ok().map(|c| c.value_msun),
    }
}

#[cfg(test)]
mod tests {
    use super::tov_cache::{decode, encode, warm};
    use super::*;

    #[test]
    fn a_kept_relativistic_correction_reads_back_bit_for_bit() {
        // The reference is the correction computed in this process (tov.rs checks it against
        // direct root-found TOV solves); what the cache returns must equal it exactly.
        let core = Core::Helium;
        let computed = tov::tov_correction(core).unwrap();
        let bytes = encode(computed);
        assert_eq!(decode(core, &bytes).as_ref(), Some(computed));
        // Truncated, extended or foreign bytes are refused, not misread.
        assert!(decode(core, &bytes[..bytes.len() - 1]).is_none());
        let mut longer = bytes.clone();
        longer.push(0);
        assert!(decode(core, &longer).is_none());
        assert!(decode(core, b"something else").is_none());
        let mut unsorted = bytes.clone();
        let first_x = PAYLOAD_OFFSET_OF_FIRST_NODE;
        unsorted[first_x..first_x + 8].copy_from_slice(&1e3f64.to_le_bytes());
        assert!(decode(core, &unsorted).is_none());
    }

    /// Where the first node's ln M starts in a payload: magic, maximum mass, count.
    const PAYLOAD_OFFSET_OF_FIRST_NODE: usize = b"tov-correction-1\n".len() + 8 + 8;

    #[test]
    fn warming_with_a_cache_stores_the_correction_it_serves() {
        let dir = tempfile::tempdir().unwrap();
        let cache = Cache::new(dir.path());
        let core = Core::Helium;
        warm(&cache, core);
        let folder = dir.path().join("standard-tables");
        let entries: Vec<_> = std::fs::read_dir(&folder).unwrap().collect();
        assert_eq!(entries.len(), 1);
        // The grids' retention does not see it.
        assert!(cache.prune(0, None).is_empty());
        assert_eq!(std::fs::read_dir(&folder).unwrap().count(), 1);
        // A second warm reads it (the process already has the correction either way).
        warm(&cache, core);
        assert_eq!(std::fs::read_dir(&folder).unwrap().count(), 1);
    }
}
