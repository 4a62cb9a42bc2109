//! Calibration of the whole comparison, measured: synthetic catalogues drawn at a known (ϒ, τ)
//! with the shared systematics actually shifted by a draw from their prior, confronted through
//! the engine with an invented analytic bound surface (no stellar structure is solved), and the
//! rate at which the truth falls outside the 95.45 % two-parameter region (false exclusion) and
//! outside the 95.45 % ϒ interval at τ = 0 counted over seeds.
//!
//! Target: a false-exclusion rate of 4.55 % within its binomial error; the fast tests fail above
//! 8 % (the acceptance rule). The full table (10⁵ objects, more seeds) is the ignored
//! test `calibration_table`, run with
//! `cargo test --test stats_calibration -- --ignored --nocapture`.
//!
//! Surface: MMHB = 0.075 (1 + 0.2 ϒ + 0.5 τ) M☉, Chandrasekhar mass = 1.40 (1 − 0.3 ϒ + 0.1 τ)
//! M☉ — invented slopes of the size the theory gives, with different directions so that the
//! two bounds together constrain both parameters.

mod common;

use rayon::prelude::*;

use dwarfbound::catalogue::{CatalogueObject, ObjectClass};
use dwarfbound::confront::engine::{confront, BoundSurface, EngineOptions};
use dwarfbound::confront::mass_terms::{LikelihoodChoice, Systematics};
use dwarfbound::confront::reduce::{ReduceOptions, SplitMix64};
use dwarfbound::confront::regions::Level;

const MMHB_FLOOR: f64 = 0.005;
const CH_FLOOR: f64 = 0.03;

fn mmhb(u: f64, t: f64) -> f64 {
    0.075 * (1.0 + 0.2 * u + 0.5 * t)
}
fn chandra(u: f64, t: f64) -> f64 {
    1.40 * (1.0 - 0.3 * u + 0.1 * t)
}

struct Surface {
    u: Vec<f64>,
    t: Vec<f64>,
}

impl BoundSurface for Surface {
    fn upsilon(&self) -> &[f64] {
        &self.u
    }
    fn tau(&self) -> &[f64] {
        &self.t
    }
    fn mmhb_msun(&self, i: usize) -> Option<f64> {
        let nu = self.u.len();
        Some(mmhb(self.u[i % nu], self.t[i / nu]))
    }
    fn chandrasekhar_mu2_msun(&self, i: usize) -> Option<f64> {
        let nu = self.u.len();
        Some(chandra(self.u[i % nu], self.t[i / nu]))
    }
    fn wd_radii_rsun(&self, _i: usize, q: &[(f64, f64)]) -> Vec<Option<f64>> {
        vec![None; q.len()]
    }
    fn wd_standard_radii(
        &self,
        q: &[dwarfbound::confront::wd_radius::WdQuery],
    ) -> Vec<Option<dwarfbound::confront::wd_radius::WdStandard>> {
        vec![None; q.len()]
    }
}

fn surface() -> Surface {
    Surface {
        u: (0..=12).map(|i| -0.3 + 0.05 * f64::from(i)).collect(),
        t: (0..=8).map(|j| -0.2 + 0.05 * f64::from(j)).collect(),
    }
}

/// Box–Muller normal deviate (Box & Muller 1958).
fn normal(rng: &mut SplitMix64) -> f64 {
    let u1 = 1.0 - rng.next_f64();
    let u2 = rng.next_f64();
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

fn object(id: usize, class: ObjectClass, truth: f64, rng: &mut SplitMix64) -> CatalogueObject {
    let sigma = (0.01 + 0.07 * rng.next_f64()) * truth;
    common::measured_object(id, class, truth + sigma * normal(rng), sigma)
}

/// One synthetic catalogue: the truth's bounds are shifted by shared draws from their priors
/// (δ_MMHB ~ N(0, 0.005²), δ_Ch ~ N(0, 0.03²)); `n_low` objects are uniform in
/// [`span.0`, B) and `n_high` uniform in (B, `span.1`], labelled by the side of the shifted
/// bound; `n_wd` white dwarfs uniform in [1.0, B_Ch) M☉.
#[derive(Clone, Copy)]
struct Case {
    name: &'static str,
    truth: (f64, f64),
    n_low: usize,
    n_high: usize,
    span: (f64, f64),
    n_wd: usize,
    /// The shared shifts fixed at these multiples of their σ (MMHB, Chandrasekhar) instead of
    /// drawn from their priors.
    shift_sigma: Option<(f64, f64)>,
}

fn draw(case: &Case, seed: u64) -> Vec<CatalogueObject> {
    let mut rng = SplitMix64::new(seed);
    let (z_b, z_ch) = (normal(&mut rng), normal(&mut rng));
    let (z_b, z_ch) = case.shift_sigma.unwrap_or((z_b, z_ch));
    let b = mmhb(case.truth.0, case.truth.1) + MMHB_FLOOR * z_b;
    let ch = chandra(case.truth.0, case.truth.1) + CH_FLOOR * z_ch;
    let mut out = Vec::new();
    for _ in 0..case.n_low {
        let m = case.span.0 + (b - case.span.0) * rng.next_f64();
        out.push(object(out.len(), ObjectClass::BrownDwarf, m, &mut rng));
    }
    for _ in 0..case.n_high {
        let m = b + (case.span.1 - b) * rng.next_f64();
        out.push(object(out.len(), ObjectClass::HBurning, m, &mut rng));
    }
    for _ in 0..case.n_wd {
        let m = 1.0 + (ch - 1.0) * rng.next_f64();
        out.push(object(out.len(), ObjectClass::WhiteDwarf, m, &mut rng));
    }
    out
}

fn fast_reduce() -> ReduceOptions {
    ReduceOptions {
        n_nodes: 129,
        n_check: 0,
        target_error: None,
        ..ReduceOptions::default()
    }
}

/// Whether the truth is excluded at 95.45 % in two parameters, and whether the ϒ interval at
/// τ = 0 (grid slice, Δχ² ≤ 4 against the slice minimum) misses it (only for τ_true = 0).
fn outcome(case: &Case, seed: u64, opts: &EngineOptions) -> (bool, Option<bool>) {
    let s = surface();
    let objs = draw(case, seed);
    let c = confront(&objs, &s, opts).expect("engine");
    let nu = s.u.len();
    let chi2: Vec<f64> = c.joint.iter().map(|v| v.unwrap_or(f64::INFINITY)).collect();
    let min = chi2.iter().copied().fold(f64::INFINITY, f64::min);
    let iu =
        s.u.iter()
            .position(|&u| (u - case.truth.0).abs() < 1e-9)
            .unwrap();
    let jt =
        s.t.iter()
            .position(|&t| (t - case.truth.1).abs() < 1e-9)
            .unwrap();
    let excluded = chi2[jt * nu + iu] - min > Level::Cl95.dchi2(2);
    let slice_miss = (case.truth.1 == 0.0).then(|| {
        let row = &chi2[jt * nu..(jt + 1) * nu];
        let m = row.iter().copied().fold(f64::INFINITY, f64::min);
        row[iu] - m > Level::Cl95.dchi2(1)
    });
    (excluded, slice_miss)
}

/// (false-exclusion rate, interval miss rate) over `seeds` seeds.
fn rates(case: &Case, seeds: u64, opts: &EngineOptions) -> (f64, Option<f64>) {
    let outs: Vec<(bool, Option<bool>)> = (0..seeds)
        .into_par_iter()
        .map(|s| outcome(case, 7919 * s + 17, opts))
        .collect();
    let n = outs.len() as f64;
    let excl = outs.iter().filter(|o| o.0).count() as f64 / n;
    let miss = outs
        .iter()
        .map(|o| o.1)
        .collect::<Option<Vec<bool>>>()
        .map(|v| v.iter().filter(|x| **x).count() as f64 / n);
    (excl, miss)
}

fn options(systematics: Systematics, likelihood: LikelihoodChoice) -> EngineOptions {
    let mut o = EngineOptions {
        reduce: fast_reduce(),
        ..EngineOptions::default()
    };
    o.mass_terms.systematics = systematics;
    o.mass_terms.likelihood = likelihood;
    o
}

/// Binomial acceptance of the issue: the false-exclusion rate must not exceed 8 %.
const FAIL_ABOVE: f64 = 0.08;

/// The one-parameter ϒ interval at τ = 0 (read here on the coarse grid row, no sub-grid) is
/// held to the same 8 % line. Before the truncated-population probabilities of a one-sided edge
/// it missed in 10–12 % of these catalogues, driven by the white dwarfs piled up to the
/// Chandrasekhar mass.
const INTERVAL_MISS_GUARD: f64 = FAIL_ABOVE;

const FEW: Case = Case {
    name: "few objects, standard gravity",
    truth: (0.0, 0.0),
    n_low: 8,
    n_high: 12,
    span: (0.05, 0.11),
    n_wd: 10,
    shift_sigma: None,
};

const CROWDED_2_TO_1: Case = Case {
    name: "10^4 crowding the MMHB, stars:BD density 2:1, standard gravity",
    truth: (0.0, 0.0),
    n_low: 2500,
    n_high: 7500,
    span: (0.05, 0.125),
    n_wd: 20,
    shift_sigma: None,
};

const CROWDED_1_TO_2_SHIFTED: Case = Case {
    name: "10^4 crowding the MMHB, density 1:2, (ϒ, τ) = (0.1, −0.05)",
    truth: (0.1, -0.05),
    n_low: 6000,
    n_high: 4000,
    span: (0.04, 0.10),
    n_wd: 20,
    shift_sigma: None,
};

#[test]
fn few_objects_false_exclusion_within_target() {
    // Target: the nominal 4.55 % of a 95.45 % region (definition of the level); fail above 8 %.
    let (excl, miss) = rates(
        &FEW,
        200,
        &EngineOptions {
            reduce: fast_reduce(),
            ..Default::default()
        },
    );
    eprintln!(
        "{}: false exclusion {excl:.3}, ϒ-interval miss {miss:?}",
        FEW.name
    );
    assert!(excl <= FAIL_ABOVE, "false exclusion {excl}");
    assert!(
        miss.is_some_and(|m| m <= INTERVAL_MISS_GUARD),
        "interval miss {miss:?}"
    );
}

#[test]
fn crowded_catalogue_false_exclusion_within_target() {
    // Target as above. The old default (per-object floor, product likelihood) is measured too
    // and printed: it excludes the truth almost always on this catalogue (the crowding bias documented in docs/, statistics).
    let defaults = EngineOptions {
        reduce: fast_reduce(),
        ..Default::default()
    };
    // The shifted 1 : 2 case is in the ignored table (cost).
    crowded_case_within_target(&CROWDED_2_TO_1, &defaults, "");
    let old = options(Systematics::PerObject, LikelihoodChoice::Product);
    let (excl, _) = rates(&CROWDED_2_TO_1, 20, &old);
    eprintln!("old default on the 2:1 case: false exclusion {excl:.3}");
    assert!(excl > 0.5, "the old default should fail here ({excl})");
}

/// The grouped mass-function fit (`calibrated::Grouping`) forced on the crowded
/// 10⁴ catalogue: its 10⁴ objects are below the grouping threshold, so the test above runs the
/// exact fit. Same target and line. Measured at 200 seeds: false exclusion 0.020 and ϒ-interval
/// miss 0.015, the exact fit's rates on the same seeds.
#[test]
fn crowded_catalogue_grouped_fit_false_exclusion_within_target() {
    let mut grouped = EngineOptions {
        reduce: fast_reduce(),
        ..Default::default()
    };
    grouped.mass_terms.calibrated.deconvolve.grouping =
        dwarfbound::confront::calibrated::Grouping::from_name("grouped").unwrap();
    crowded_case_within_target(&CROWDED_2_TO_1, &grouped, " (grouped fit)");
}

/// A crowded case at 200 seeds under `opts`: false exclusion within the target, and the
/// ϒ-interval miss (where the interval closes) within its guard. `label` follows the case's
/// name in the printed rates.
fn crowded_case_within_target(case: &Case, opts: &EngineOptions, label: &str) {
    let (excl, miss) = rates(case, 200, opts);
    eprintln!(
        "{}{label}: false exclusion {excl:.3}, ϒ-interval miss {miss:?}",
        case.name
    );
    assert!(excl <= FAIL_ABOVE, "{}: false exclusion {excl}", case.name);
    if let Some(m) = miss {
        assert!(m <= INTERVAL_MISS_GUARD, "{}: interval miss {m}", case.name);
    }
}

/// White dwarfs only, uniform in [1.0 M☉, B_Ch) with B_Ch the truth shifted by its shared
/// draw: the one-sided Chandrasekhar edge on its own.
const fn wd_only(n_wd: usize, name: &'static str) -> Case {
    Case {
        name,
        truth: (0.0, 0.0),
        n_low: 0,
        n_high: 0,
        span: (0.05, 0.11),
        n_wd,
        shift_sigma: None,
    }
}

#[test]
fn chandrasekhar_edge_interval_coverage() {
    // Target: the ϒ interval at τ = 0 (Δχ² ≤ 4, one parameter) misses the truth in 4.55 % of
    // catalogues (definition of the level); fail above 8 % (the rule). Before the
    // truncation normalisation the calibrated likelihood missed in 6.0 % (10 white dwarfs)
    // and 10 % (30), the product likelihood in 11.5 % and 57.5 %.
    let defaults = EngineOptions {
        reduce: fast_reduce(),
        ..Default::default()
    };
    for case in [
        wd_only(10, "10 white dwarfs at the edge"),
        wd_only(30, "30 white dwarfs at the edge"),
    ] {
        let (excl, miss) = rates(&case, 200, &defaults);
        eprintln!(
            "{}: false exclusion {excl:.3}, ϒ-interval miss {miss:?}",
            case.name
        );
        assert!(excl <= FAIL_ABOVE, "{}: false exclusion {excl}", case.name);
        assert!(
            miss.is_some_and(|m| m <= FAIL_ABOVE),
            "{}: interval miss {miss:?}",
            case.name
        );
    }
    // The test has power: the label probabilities alone (no truncation) miss the truth well
    // above the line with 30 white dwarfs at the edge (measured 10 % at 200 seeds before).
    let mut labels_only = options(Systematics::Shared, LikelihoodChoice::Calibrated);
    labels_only.mass_terms.calibrated.edge_truncation = false;
    let (_, miss) = rates(&wd_only(30, "30 white dwarfs"), 200, &labels_only);
    eprintln!("30 white dwarfs, label probabilities only: ϒ-interval miss {miss:?}");
    assert!(miss.is_some_and(|m| m > FAIL_ABOVE), "{miss:?}");
}

#[test]
fn anchor_shifted_by_one_sigma_gives_no_false_detection() {
    // The acceptance: the MMHB anchor (and the Chandrasekhar floor) shifted by +1σ or
    // −1σ in the synthetic truth, for every seed, must not exclude the truth beyond the nominal
    // rate; the line is the same 8 % (target 4.55 %, binomial error ±1.5 % at 200 seeds).
    // A fixed 1σ shift costs 1 in χ² at the truth through the prior, so the rate sits above
    // the rate with shifts drawn from the prior but must stay under the line.
    let defaults = EngineOptions {
        reduce: fast_reduce(),
        ..Default::default()
    };
    for z in [1.0, -1.0] {
        let case = Case {
            name: "few objects, shared shifts fixed at ±1σ",
            shift_sigma: Some((z, z)),
            ..FEW
        };
        let (excl, miss) = rates(&case, 200, &defaults);
        eprintln!(
            "{} (z = {z}): false exclusion {excl:.3}, ϒ-interval miss {miss:?}",
            case.name
        );
        assert!(excl <= FAIL_ABOVE, "z = {z}: false exclusion {excl}");
        assert!(
            miss.is_some_and(|m| m <= FAIL_ABOVE),
            "z = {z}: interval miss {miss:?}"
        );
    }
}

/// Seeds from an environment variable, or the default.
fn env_seeds(var: &str, default: u64) -> u64 {
    std::env::var(var)
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

/// The full table for the README: one line per catalogue and model, with the binomial error
/// of the target rate at that many seeds (√(p(1 − p)/n), p = 0.0455) and the interval's
/// coverage. Seeds: `DWARFBOUND_CAL_SEEDS` (default 400) for the small catalogues,
/// `DWARFBOUND_CAL_SEEDS_1E4` (200) for 10⁴ objects and `DWARFBOUND_CAL_SEEDS_1E5` (40) for
/// 10⁵; the other models than the default get a quarter of those (they are there to show what
/// the default replaces). Lines are printed as they are measured.
#[test]
#[ignore = "tens of minutes; prints the calibration table of the README"]
fn calibration_table() {
    let big = |c: Case| Case {
        n_low: c.n_low * 10,
        n_high: c.n_high * 10,
        ..c
    };
    let small = env_seeds("DWARFBOUND_CAL_SEEDS", 400);
    let mid = env_seeds("DWARFBOUND_CAL_SEEDS_1E4", 200);
    let large = env_seeds("DWARFBOUND_CAL_SEEDS_1E5", 40);
    let cases = [
        (FEW, small),
        (
            Case {
                name: "few objects, shared shifts fixed at +1σ",
                shift_sigma: Some((1.0, 1.0)),
                ..FEW
            },
            small,
        ),
        (
            wd_only(10, "10 white dwarfs at the Chandrasekhar edge"),
            small,
        ),
        (
            wd_only(30, "30 white dwarfs at the Chandrasekhar edge"),
            small,
        ),
        (
            wd_only(100, "100 white dwarfs at the Chandrasekhar edge"),
            small,
        ),
        (
            Case {
                name: "10^5 crowding the MMHB, density 2:1, standard gravity",
                ..big(CROWDED_2_TO_1)
            },
            large,
        ),
        (CROWDED_2_TO_1, mid),
        (CROWDED_1_TO_2_SHIFTED, mid),
    ];
    println!("| catalogue | model | seeds | false exclusion (95.45 %, 2 par.) ± binomial error of 4.55 % | ϒ interval at τ = 0: miss (coverage) |");
    println!("|---|---|---|---|---|");
    // Optional filters for partial runs: only catalogues whose name contains
    // `DWARFBOUND_CAL_ONLY`, and only the default model with `DWARFBOUND_CAL_DEFAULT_ONLY=1`.
    let only = std::env::var("DWARFBOUND_CAL_ONLY").ok();
    let default_only = std::env::var("DWARFBOUND_CAL_DEFAULT_ONLY").is_ok_and(|v| v == "1");
    for (case, seeds) in cases {
        if only
            .as_ref()
            .is_some_and(|o| !case.name.contains(o.as_str()))
        {
            continue;
        }
        let mut labels_only = options(Systematics::Shared, LikelihoodChoice::Calibrated);
        labels_only.mass_terms.calibrated.edge_truncation = false;
        let models = [
            (
                "default (shared, profiled; auto likelihood)",
                options(Systematics::Shared, LikelihoodChoice::Auto),
                seeds,
            ),
            (
                "calibrated, label probabilities only (before this version)",
                labels_only,
                (seeds / 4).max(10),
            ),
            (
                "shared, product likelihood",
                options(Systematics::Shared, LikelihoodChoice::Product),
                (seeds / 4).max(10),
            ),
            (
                "per-object floor, product (old default)",
                options(Systematics::PerObject, LikelihoodChoice::Product),
                (seeds / 4).max(10),
            ),
        ];
        for (label, opts, n) in models.into_iter().take(if default_only { 1 } else { 4 }) {
            let t0 = std::time::Instant::now();
            let (excl, miss) = rates(&case, n, &opts);
            println!(
                "| {} | {label} | {n} | {:.3} ± {:.3} | {} |",
                case.name,
                excl,
                (0.0455 * (1.0 - 0.0455) / n as f64).sqrt(),
                miss.map_or("—".to_string(), |m| format!("{m:.3} ({:.3})", 1.0 - m))
            );
            eprintln!("  ({:.0} s)", t0.elapsed().as_secs_f64());
        }
    }
}

/// The 100 000-object standard-gravity catalogue of the issue (generator
/// `tools/make_crowded_catalogue.py`, seed 1) must not exclude standard gravity. Measured on
/// this branch: Δχ² = 2.11 at ϒ = τ = 0 (95.45 % threshold 6.18); the per-object product
/// likelihood of earlier versions gave Δχ² ≈ 1455.
#[test]
#[ignore = "needs python3 and about a minute; run with -- --ignored"]
fn crowded_standard_gravity_catalogue_is_not_excluded() {
    let dir = std::env::temp_dir().join(format!("dwarfbound-crowded-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let csv = dir.join("crowded.csv");
    let root = env!("CARGO_MANIFEST_DIR");
    let st = std::process::Command::new("python3")
        .arg(format!("{root}/tools/make_crowded_catalogue.py"))
        .args(["--seed", "1", "--out"])
        .arg(&csv)
        .status()
        .expect("python3");
    assert!(st.success());
    let out = dir.join("out");
    let st = std::process::Command::new(env!("CARGO_BIN_EXE_dwarfbound"))
        .arg("confront")
        .arg(&csv)
        .arg("--out")
        .arg(&out)
        .status()
        .unwrap();
    assert!(st.success());
    let s: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out.join("summary.json")).unwrap()).unwrap();
    let sg = &s["standard_gravity"];
    eprintln!("standard gravity: {sg}");
    assert_eq!(sg["allowed_cl95"], serde_json::Value::Bool(true), "{sg}");
    let _ = std::fs::remove_dir_all(&dir);
}

/// Δχ² of the truth on the τ = 0 row (against the row's minimum), for the diagnosis below.
fn slice_dchi2_at_truth(case: &Case, seed: u64, opts: &EngineOptions) -> f64 {
    let s = surface();
    let objs = draw(case, seed);
    let c = confront(&objs, &s, opts).expect("engine");
    let nu = s.u.len();
    let jt = s.t.iter().position(|&t| t.abs() < 1e-9).unwrap();
    let iu = s.u.iter().position(|&u| u.abs() < 1e-9).unwrap();
    let row: Vec<f64> = (0..nu)
        .map(|i| c.joint[jt * nu + i].unwrap_or(f64::INFINITY))
        .collect();
    let m = row.iter().copied().fold(f64::INFINITY, f64::min);
    row[iu] - m
}

/// Why the τ = 0 interval under-covers on the few-object catalogue: the distribution of Δχ²
/// at the truth on the slice, with and without the white dwarfs, for each likelihood, against
/// χ² with 1 degree of freedom (what the thresholds 1, 4, 9 assume: exceeded in 31.73 %,
/// 4.55 %, 0.27 %) and with 2 (60.65 %, 13.53 %, 1.11 %; P(χ²₂ > x) = e^{−x/2}).
#[test]
#[ignore = "seconds to a minute; prints the diagnosis of the τ = 0 interval's coverage"]
fn interval_miss_diagnosis() {
    let seeds: Vec<u64> = (0..200).map(|s| 7919 * s + 17).collect();
    let cases = [
        FEW,
        Case {
            name: "stars and brown dwarfs only",
            n_wd: 0,
            ..FEW
        },
        wd_only(3, "3 white dwarfs only"),
        wd_only(10, "10 white dwarfs only"),
        wd_only(30, "30 white dwarfs only"),
        wd_only(100, "100 white dwarfs only"),
    ];
    println!("| catalogue | likelihood | seeds | Δχ² > 1 | Δχ² > 4 | Δχ² > 9 | mean Δχ² |");
    println!("|---|---|---|---|---|---|---|");
    for case in cases {
        for (label, lik, edge) in [
            ("product", LikelihoodChoice::Product, false),
            (
                "calibrated, labels only",
                LikelihoodChoice::Calibrated,
                false,
            ),
            (
                "calibrated, truncated population",
                LikelihoodChoice::Calibrated,
                true,
            ),
        ] {
            let mut opts = options(Systematics::Shared, lik);
            opts.mass_terms.calibrated.edge_truncation = edge;
            let d: Vec<f64> = seeds
                .par_iter()
                .map(|&s| slice_dchi2_at_truth(&case, s, &opts))
                .collect();
            let n = d.len() as f64;
            let above = |x: f64| d.iter().filter(|&&v| v > x).count() as f64 / n;
            println!(
                "| {} | {label} | {} | {:.3} | {:.3} | {:.3} | {:.2} |",
                case.name,
                d.len(),
                above(1.0),
                above(4.0),
                above(9.0),
                d.iter().sum::<f64>() / n
            );
        }
    }
}
