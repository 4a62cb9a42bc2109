//! The vetting summary: counts per catalogue and per class, mass ranges, median errors and the
//! quarantine reasons, as a serialisable struct and as plain text.
//!
//! Computed here rather than in the command line so that `vet`, `confront` and `run` print the
//! same numbers.
//!
//! ```
//! use dwarfbound::catalogue::summary::VetSummary;
//! use dwarfbound::catalogue::vet::Vetted;
//! let s = VetSummary::from_vetted(&Vetted::default());
//! assert_eq!((s.rows_in, s.rows_accepted, s.rows_quarantined), (0, 0, 0));
//! ```

use std::collections::BTreeMap;
use std::fmt::Write as _;

use super::vet::{CatalogueObject, CatalogueTally, ObjectClass, Vetted};

/// Accepted objects of one class.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ClassSummary {
    /// Canonical class label.
    pub class: &'static str,
    /// Objects accepted.
    pub count: usize,
    /// Of which mass limits.
    pub limits: usize,
    /// Smallest mass (or limit), M☉; `None` when `count` is 0.
    pub mass_min_msun: Option<f64>,
    /// Largest mass (or limit), M☉.
    pub mass_max_msun: Option<f64>,
    /// Median 1σ mass error (mean of the two sides), M☉, over objects with errors.
    pub median_mass_err_msun: Option<f64>,
}

/// One catalogue: its tally and its classes.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct CatalogueSummary {
    /// The file.
    pub path: String,
    /// Data rows read.
    pub rows_in: usize,
    /// Rows accepted.
    pub rows_accepted: usize,
    /// Rows quarantined.
    pub rows_quarantined: usize,
    /// Per class, only classes with accepted objects.
    pub classes: Vec<ClassSummary>,
}

/// How often a (column, reason) pair occurred.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct ReasonCount {
    /// Column name in the file.
    pub column: String,
    /// Reason string.
    pub reason: String,
    /// Rows.
    pub count: usize,
}

/// The whole summary.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct VetSummary {
    /// dwarfbound version.
    pub version: &'static str,
    /// Per catalogue, in the order given.
    pub catalogues: Vec<CatalogueSummary>,
    /// Per class over all catalogues (every class, also empty ones).
    pub classes: Vec<ClassSummary>,
    /// Quarantine reasons, most frequent first.
    pub quarantine_reasons: Vec<ReasonCount>,
    /// Total rows read.
    pub rows_in: usize,
    /// Total accepted.
    pub rows_accepted: usize,
    /// Total quarantined.
    pub rows_quarantined: usize,
}

/// The median (mean of the two middle values for an even count). Found by selection rather
/// than a sort (a sort of a million errors per class was a few per cent of `vet`); the middle
/// values under `total_cmp` are the same bits whichever way they are found.
fn median(mut v: Vec<f64>) -> Option<f64> {
    if v.is_empty() {
        return None;
    }
    let n = v.len();
    let (below, mid, _) = v.select_nth_unstable_by(n / 2, f64::total_cmp);
    let mid = *mid;
    Some(if n % 2 == 1 {
        mid
    } else {
        let lower = below.iter().copied().max_by(f64::total_cmp).unwrap_or(mid);
        0.5 * (lower + mid)
    })
}

/// What one pass over the objects gathers for one class.
#[derive(Default)]
struct ClassAccumulator {
    count: usize,
    limits: usize,
    lo: f64,
    hi: f64,
    errs: Vec<f64>,
}

impl ClassAccumulator {
    fn new() -> Self {
        Self {
            lo: f64::INFINITY,
            hi: f64::NEG_INFINITY,
            ..Self::default()
        }
    }

    /// One empty accumulator per class, in the order hburning, brown dwarf, white dwarf.
    fn per_class() -> [Self; 3] {
        std::array::from_fn(|_| Self::new())
    }

    fn add(&mut self, o: &CatalogueObject) {
        self.count += 1;
        if o.mass_limit != super::vet::MassLimit::None {
            self.limits += 1;
        }
        self.lo = self.lo.min(o.mass_msun);
        self.hi = self.hi.max(o.mass_msun);
        if let (Some(a), Some(b)) = (o.mass_err_lo_msun.get(), o.mass_err_hi_msun.get()) {
            self.errs.push(0.5 * (a + b));
        }
    }

    /// Adds another catalogue's objects of the class (min and max, counts and the multiset of
    /// errors do not depend on the order).
    fn merge(&mut self, other: &ClassAccumulator) {
        self.count += other.count;
        self.limits += other.limits;
        self.lo = self.lo.min(other.lo);
        self.hi = self.hi.max(other.hi);
        self.errs.extend_from_slice(&other.errs);
    }

    fn summary(self, class: ObjectClass) -> ClassSummary {
        let count = self.count;
        ClassSummary {
            class: class.label(),
            count,
            limits: self.limits,
            mass_min_msun: (count > 0).then_some(self.lo),
            mass_max_msun: (count > 0).then_some(self.hi),
            median_mass_err_msun: median(self.errs),
        }
    }
}

/// The three classes' accumulators over `objects`, in one pass.
fn accumulate<'a>(objects: impl Iterator<Item = &'a CatalogueObject>) -> [ClassAccumulator; 3] {
    let mut acc = ClassAccumulator::per_class();
    accumulate_into(&mut acc, objects);
    acc
}

/// Adds `objects` to the three classes' accumulators.
fn accumulate_into<'a>(
    acc: &mut [ClassAccumulator; 3],
    objects: impl Iterator<Item = &'a CatalogueObject>,
) {
    for o in objects {
        let k = match o.class {
            ObjectClass::HBurning => 0,
            ObjectClass::BrownDwarf => 1,
            ObjectClass::WhiteDwarf => 2,
        };
        acc[k].add(o);
    }
}

/// The summary gathered while the objects stream past (`vet` never holds them all): one
/// class accumulator per catalogue, fed in catalogue order.
///
/// ```
/// use dwarfbound::catalogue::summary::{SummaryBuilder, VetSummary};
/// use dwarfbound::catalogue::vet::Vetted;
/// let s = SummaryBuilder::default().finish(&Vetted::default());
/// assert_eq!(s, VetSummary::from_vetted(&Vetted::default()));
/// ```
#[derive(Default)]
pub struct SummaryBuilder {
    catalogues: Vec<[ClassAccumulator; 3]>,
}

impl SummaryBuilder {
    /// The next catalogue's objects follow.
    pub fn begin_catalogue(&mut self) {
        self.catalogues.push(ClassAccumulator::per_class());
    }

    /// Adds accepted objects of the current catalogue.
    pub fn add(&mut self, objects: &[CatalogueObject]) {
        if self.catalogues.is_empty() {
            self.begin_catalogue();
        }
        if let Some(acc) = self.catalogues.last_mut() {
            accumulate_into(acc, objects.iter());
        }
    }

    /// The summary of the catalogues fed, with the counts and quarantine of `v` (whose
    /// `objects` may be empty: they were fed here instead). The same numbers as
    /// [`VetSummary::from_vetted`] on the objects held (min, max, counts and the multiset of
    /// errors do not depend on how the objects were cut into batches).
    pub fn finish(self, v: &Vetted) -> VetSummary {
        let mut accs = self.catalogues.into_iter();
        let per_catalogue: Vec<[ClassAccumulator; 3]> = v
            .tallies
            .iter()
            .map(|_| accs.next().unwrap_or_else(ClassAccumulator::per_class))
            .collect();
        VetSummary::assemble(v, per_catalogue, None)
    }
}

impl VetSummary {
    /// Summarises a vetting result.
    pub fn from_vetted(v: &Vetted) -> VetSummary {
        // Objects are in catalogue order, `rows_accepted` per catalogue (the same path may
        // be given twice, so the path alone does not identify a catalogue's objects).
        let mut start = 0;
        let per_catalogue: Vec<[ClassAccumulator; 3]> = v
            .tallies
            .iter()
            .map(|t: &CatalogueTally| {
                let end = (start + t.rows_accepted).min(v.objects.len());
                let mine = &v.objects[start.min(end)..end];
                start = end;
                accumulate(mine.iter())
            })
            .collect();
        // The classes over all catalogues merge the catalogues' accumulators when these cover
        // every object (always, unless the tallies disagree with the objects).
        let all = (start != v.objects.len()).then(|| accumulate(v.objects.iter()));
        Self::assemble(v, per_catalogue, all)
    }

    /// The summary from each catalogue's accumulators (and, when given, the accumulators over
    /// all catalogues; otherwise the catalogues' are merged).
    fn assemble(
        v: &Vetted,
        per_catalogue: Vec<[ClassAccumulator; 3]>,
        all: Option<[ClassAccumulator; 3]>,
    ) -> VetSummary {
        let mut merged = ClassAccumulator::per_class();
        let catalogues = v
            .tallies
            .iter()
            .zip(per_catalogue)
            .map(|(t, acc)| {
                for (a, c) in merged.iter_mut().zip(&acc) {
                    a.merge(c);
                }
                CatalogueSummary {
                    path: t.path.clone(),
                    rows_in: t.rows_in,
                    rows_accepted: t.rows_accepted,
                    rows_quarantined: t.rows_quarantined,
                    classes: ObjectClass::ALL
                        .iter()
                        .zip(acc)
                        .map(|(c, a)| a.summary(*c))
                        .filter(|c| c.count > 0)
                        .collect(),
                }
            })
            .collect();
        let classes = ObjectClass::ALL
            .iter()
            .zip(all.unwrap_or(merged))
            .map(|(c, a)| a.summary(*c))
            .collect();
        let mut counts: BTreeMap<(String, String), usize> = BTreeMap::new();
        for q in &v.quarantine {
            *counts
                .entry((q.column.clone(), q.reason.clone()))
                .or_default() += 1;
        }
        let mut quarantine_reasons: Vec<ReasonCount> = counts
            .into_iter()
            .map(|((column, reason), count)| ReasonCount {
                column,
                reason,
                count,
            })
            .collect();
        quarantine_reasons.sort_by_key(|r| std::cmp::Reverse(r.count));
        VetSummary {
            version: env!("CARGO_PKG_VERSION"),
            catalogues,
            classes,
            quarantine_reasons,
            rows_in: v.tallies.iter().map(|t| t.rows_in).sum(),
            rows_accepted: v.tallies.iter().map(|t| t.rows_accepted).sum(),
            rows_quarantined: v.tallies.iter().map(|t| t.rows_quarantined).sum(),
        }
    }

    /// Plain-text rendering for a terminal.
    pub fn to_text(&self) -> String {
        let mut s = String::new();
        for c in &self.catalogues {
            let _ = writeln!(
                s,
                "{}: {} rows in, {} accepted, {} quarantined",
                c.path, c.rows_in, c.rows_accepted, c.rows_quarantined
            );
            for k in &c.classes {
                let _ = writeln!(s, "  {}", class_line(k));
            }
        }
        if self.catalogues.len() > 1 {
            let _ = writeln!(
                s,
                "all catalogues: {} rows in, {} accepted, {} quarantined",
                self.rows_in, self.rows_accepted, self.rows_quarantined
            );
            for k in self.classes.iter().filter(|k| k.count > 0) {
                let _ = writeln!(s, "  {}", class_line(k));
            }
        }
        if !self.quarantine_reasons.is_empty() {
            let _ = writeln!(s, "quarantine reasons:");
            for r in &self.quarantine_reasons {
                let _ = writeln!(s, "  {:>5}  {}: {}", r.count, r.column, r.reason);
            }
        }
        s
    }
}

/// Four significant digits, plain notation where readable.
fn sig4(x: f64) -> String {
    let a = x.abs();
    if a == 0.0 || !(1e-3..1e4).contains(&a) {
        return format!("{x:.3e}");
    }
    let decimals = (3 - a.log10().floor() as i32).max(0) as usize;
    format!("{x:.decimals$}")
}

fn class_line(k: &ClassSummary) -> String {
    let range = match (k.mass_min_msun, k.mass_max_msun) {
        (Some(a), Some(b)) => format!("mass {}–{} Msun", sig4(a), sig4(b)),
        _ => "no masses".to_string(),
    };
    let err = k.median_mass_err_msun.map_or("no errors".to_string(), |e| {
        format!("median error {} Msun", sig4(e))
    });
    let plural = |n: usize, word: &str| format!("{n} {word}{}", if n == 1 { "" } else { "s" });
    let limits = if k.limits > 0 {
        format!(" ({})", plural(k.limits, "limit"))
    } else {
        String::new()
    };
    format!(
        "{:<12} {:>12}{limits}, {range}, {err}",
        k.class,
        plural(k.count, "object")
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn median_and_sig4() {
        assert_eq!(median(vec![3.0, 1.0, 2.0]), Some(2.0));
        assert_eq!(median(vec![4.0, 1.0, 2.0, 3.0]), Some(2.5));
        assert_eq!(median(vec![]), None);
        assert_eq!(sig4(0.08123), "0.08123");
        assert_eq!(sig4(1.5), "1.500");
        assert_eq!(sig4(1e-5), "1.000e-5");
    }

    proptest::proptest! {
        /// The selection gives the bits the full sort gave (the definition of the median,
        /// common practice, no source), repeated values and both parities included.
        #[test]
        fn median_by_selection_equals_median_by_sort(v in proptest::collection::vec(
            proptest::sample::select(vec![0.001, 0.002, 0.0025, 0.1, 1e-300, 3.0, 7.5e10]), 0..40)) {
            let mut sorted = v.clone();
            sorted.sort_by(f64::total_cmp);
            let n = sorted.len();
            let want = (n > 0).then(|| if n % 2 == 1 {
                sorted[n / 2]
            } else {
                0.5 * (sorted[n / 2 - 1] + sorted[n / 2])
            });
            proptest::prop_assert_eq!(median(v).map(f64::to_bits), want.map(f64::to_bits));
        }
    }
}
