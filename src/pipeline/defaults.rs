//! Every default of the theory and the statistics, with its unit and its reason, as the TOML of a
//! `run` config (`dwarfbound defaults`).
//!
//! The values are read from the defaults the code itself uses ([`TheorySettings::default`],
//! [`StatisticsConfig::default`], [`AlarmConfig::default`] and the default grid of
//! `confront`), never typed a second time, so the printed file cannot drift from what a run does.
//! Put an `output = "…"` line at its top and a `[[catalogue]]` list anywhere, and it is a
//! complete config whose result is `confront`'s on the same files.
//!
//! ```
//! let text = dwarfbound::pipeline::defaults::defaults_toml();
//! let cfg = format!("output = \"out\"\n{text}\n[[catalogue]]\npath = \"a.csv\"\n");
//! assert!(dwarfbound::pipeline::config::Config::from_toml_str(&cfg).is_ok());
//! ```

use std::fmt::Write as _;

use super::config::{AlarmConfig, StatisticsConfig};
use crate::theory::mmhb::{MmhbMode, RAW_FLOOR_MODEL_A_MSUN, RAW_FLOOR_MODEL_B_MSUN};
use crate::theory::point::TheorySettings;
use crate::theory::Axis;

/// Default ϒ axis of `confront` when none is given: the range of the README's grid example
/// (`--upsilon=-0.3:0.6:91`) at half its resolution, which keeps a first run quick.
pub const DEFAULT_UPSILON: Axis = Axis {
    start: -0.3,
    stop: 0.6,
    count: 46,
};

/// Default τ axis of `confront` when none is given.
pub const DEFAULT_TAU: Axis = Axis {
    start: -0.3,
    stop: 0.3,
    count: 31,
};

/// A float as TOML (always with a decimal point or exponent, so it reads back as a float).
fn num(x: f64) -> String {
    format!("{x:?}")
}

fn axis(a: &Axis) -> String {
    format!("\"{}:{}:{}\"", a.start, a.stop, a.count)
}

/// One `key = value` line with its comment (unit; reason; where it is explained).
fn line(out: &mut String, key: &str, value: &str, why: &str) {
    let _ = writeln!(out, "{key} = {value}");
    for l in why.lines() {
        let _ = writeln!(out, "#   {l}");
    }
}

/// The defaults as TOML, every key commented with its unit and reason.
pub fn defaults_toml() -> String {
    let t = TheorySettings::default();
    let st = StatisticsConfig::default();
    let al = AlarmConfig::default();
    let (anchor_msun, anchored_floor_msun) = match MmhbMode::default() {
        MmhbMode::Anchored {
            anchor_msun,
            floor_msun,
        } => (anchor_msun, floor_msun),
        MmhbMode::Raw => (f64::NAN, f64::NAN),
    };
    let mut o = String::new();
    o.push_str(
        "# dwarfbound defaults: every default of the theory and the statistics, as a `run` config.\n\
         # Each key: its value, then its unit and why it is the default, with the section of the\n\
         # model notes in the repository's docs/ folder that explains it.\n\
         # To use it: add `output = \"reports/my-run\"` as the first line, and a list of\n\
         # catalogues anywhere, e.g.\n\
         #   [[catalogue]]\n\
         #   path = \"catalogs-demo/vlm_stars.csv\"\n\
         # then `dwarfbound run this.toml`. The result equals `dwarfbound confront` on the same files.\n\n",
    );
    o.push_str("[grid]\n");
    line(
        &mut o,
        "upsilon",
        &axis(&DEFAULT_UPSILON),
        "ϒ, dimensionless; start:stop:count with both ends included. The range stays clear of\n\
         the existence bound ϒ > −2/3 at τ = 0 (docs/structure.md §1.4) and holds the region the\n\
         demo catalogues allow; 46 points keep a first run quick.",
    );
    line(
        &mut o,
        "tau",
        &axis(&DEFAULT_TAU),
        "τ, dimensionless; the anisotropy amplitude, symmetric about isotropy (docs/structure.md §2).",
    );
    o.push_str("\n[theory]\n");
    line(
        &mut o,
        "anisotropy",
        &format!("\"{}\"", t.anisotropy.name()),
        "the ansatz τ parametrises: none | density-squared | gradient. Quadratic in density is the\n\
         default: the Newtonian limit of the Bowers–Liang form, its τ the fraction of gravity\n\
         it cancels at the centre, and the atmosphere stays isotropic (docs/structure.md §2.1).",
    );
    line(
        &mut o,
        "mmhb_model",
        &format!("\"{}\"", t.mmhb_model.name()),
        "minimum hydrogen-burning mass: luminosity balance (model A, the published analytic\n\
         model) | ignition-temperature (model B, a cross-check) (docs/bounds.md §2, §3).",
    );
    line(
        &mut o,
        "mmhb_mode",
        &format!("\"{}\"", MmhbMode::default().name()),
        "anchored | raw. Anchored takes only the fractional shift Φ(ϒ, τ) from the analytic model\n\
         and applies it to an evolutionary standard-gravity value, because the analytic value\n\
         itself is off by tens of per cent (docs/bounds.md §4).",
    );
    line(
        &mut o,
        "mmhb_anchor_msun",
        &num(anchor_msun),
        "M☉; the standard-gravity MMHB of evolutionary models that the shift is applied to\n\
         (docs/bounds.md §4).",
    );
    let _ = writeln!(
        o,
        "# mmhb_floor_msun = {}\n\
         #   M☉, 1σ theory floor of the MMHB; unset = the mode's default: {} in the anchored mode\n\
         #   (the spread of evolutionary models), {} (model A) or {} (model B) in the raw mode,\n\
         #   which refuses the key (docs/bounds.md §4).",
        num(anchored_floor_msun),
        num(anchored_floor_msun),
        num(RAW_FLOOR_MODEL_A_MSUN),
        num(RAW_FLOOR_MODEL_B_MSUN)
    );
    line(
        &mut o,
        "hydrogen_fraction",
        &num(t.hydrogen_mass_fraction),
        "mass fraction X of very-low-mass stars and brown dwarfs (Z = 0); μe and μ follow from it\n\
         (docs/bounds.md §2.1).",
    );
    line(
        &mut o,
        "ignition_temperature_k",
        &num(t.ignition_temperature_k),
        "K; the central temperature at which model B calls a star hydrogen-burning, the\n\
         conventional value (docs/bounds.md §3).",
    );
    line(
        &mut o,
        "chandrasekhar_floor_msun",
        &num(t.chandrasekhar_floor_msun),
        "M☉, 1σ at μe = 2 (scaled by 4/μe²); sized to the few-per-cent gap between the Newtonian\n\
         Chandrasekhar mass and realistic maximum masses (docs/structure.md §4.6).",
    );
    line(
        &mut o,
        "wd_radius_floor_fraction",
        &num(t.wd_radius_floor_fraction),
        "fraction of the radius, 1σ; a choice that covers the cold model's neglected terms for\n\
         cool carbon-oxygen white dwarfs, not hot or helium ones (docs/structure.md §4.6).",
    );
    o.push_str("\n[statistics]\n");
    line(
        &mut o,
        "tension_sigma",
        &num(st.tension_sigma),
        "σ; objects on the wrong side of their bound by more than this at standard gravity are\n\
         listed as tensions (docs/bounds.md §8.3).",
    );
    line(
        &mut o,
        "age_min_mmhb_gyr",
        &num(st.age_min_mmhb_gyr),
        "Gyr; younger objects may still be contracting towards the main sequence, so their\n\
         class says little about the MMHB (docs/bounds.md §5).",
    );
    line(
        &mut o,
        "include_young",
        &st.include_young.to_string(),
        "keep objects younger than age_min_mmhb_gyr in the MMHB test (off: see above).",
    );
    line(
        &mut o,
        "exclude_age_unknown",
        &st.exclude_age_unknown.to_string(),
        "leave objects without an age out of the MMHB test (off: a missing age is not evidence of youth).",
    );
    line(
        &mut o,
        "wd_radius_model",
        &format!("\"{}\"", st.wd_radius_model),
        "hot | cold; standard-gravity white-dwarf radii at the object's Teff with H/He layers,\n\
         because the cold model makes hot white dwarfs look too large (docs/white-dwarfs.md).",
    );
    line(
        &mut o,
        "wd_mass_prior",
        &format!("\"{}\"", st.wd_mass_prior),
        "population | flat; the prior on each white dwarf's true mass in the radius test: their own\n\
         mass function, because a flat prior turns the population's peak into a false signal in\n\
         large catalogues (docs/white-dwarfs.md).",
    );
    line(
        &mut o,
        "wd_floor_size",
        &format!("\"{}\"", st.wd_floor_size),
        "fitted | fixed; the radius test's per-object floor: the stated size unless the white\n\
         dwarfs scatter less about standard gravity than it says (2σ), then shrunk to the widest\n\
         floor they allow, because a floor larger than the real scatter pulls τ in large\n\
         catalogues (docs/white-dwarfs.md).",
    );
    line(
        &mut o,
        "include_model_masses",
        &st.include_model_masses.to_string(),
        "keep masses that came through a standard-gravity model in their tests (off: circular).",
    );
    line(
        &mut o,
        "include_out_of_domain",
        &st.include_out_of_domain.to_string(),
        "keep white dwarfs outside the radius model's domain in the radius test (off).",
    );
    line(
        &mut o,
        "floor",
        &format!("\"{}\"", st.floor),
        "shared | per-object; a theory error is one shift common to all objects of a bound, so it\n\
         is a nuisance parameter, not independent per object (docs/bounds.md §8.8).",
    );
    line(
        &mut o,
        "nuisance",
        &format!("\"{}\"", st.nuisance),
        "profile | marginalise; how the shared shift is eliminated (docs/bounds.md §8.8).",
    );
    line(
        &mut o,
        "likelihood",
        &format!("\"{}\"", st.likelihood),
        "auto | product | calibrated; auto uses the calibrated likelihood where many objects\n\
         crowd a bound, where the product is biased (docs/bounds.md §8.7, §8.9).",
    );
    line(
        &mut o,
        "mass_function_fit",
        &format!("\"{}\"", st.mass_function_fit),
        "auto | exact | grouped; the calibrated likelihood's mass-function fit: auto is exact\n\
         up to 16 384 objects in one fit and grouped above (docs/bounds.md §8.9).",
    );
    line(
        &mut o,
        "population_aware",
        &st.population_aware.to_string(),
        "add the population-aware term (off: the calibrated likelihood covers crowding)\n\
         (docs/bounds.md §8.7).",
    );
    line(
        &mut o,
        "population_window_msun",
        &format!(
            "[{}, {}]",
            num(st.population_window_msun[0]),
            num(st.population_window_msun[1])
        ),
        "M☉; its mass window around the MMHB, used only when population_aware = true.",
    );
    o.push_str("\n[alarms]\n");
    line(
        &mut o,
        "new_tension",
        &al.new_tension.to_string(),
        "`run` exits with code 3 when an object newly exceeds tension_sigma.",
    );
    line(
        &mut o,
        "interval_shift",
        &num(al.interval_shift),
        "ϒ, dimensionless; exit 3 when an end of the 95.45 % ϒ interval at τ = 0 moves more.",
    );
    line(
        &mut o,
        "area_change",
        &num(al.area_change),
        "fraction of the grid; exit 3 when the 95.45 % allowed fraction changes more.",
    );
    o
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::pipeline::config::Config;
    use crate::pipeline::nightly::settings_from_config;
    use crate::pipeline::settings::StatisticsSettings;

    /// The printed defaults, read back as a config, give exactly the settings `confront` uses
    /// when no option is given (source: `TheorySettings::default`, `StatisticsSettings::default`).
    #[test]
    fn printed_defaults_read_back_as_the_code_defaults() {
        let dir = tempfile::tempdir().unwrap();
        let cat = dir.path().join("a.csv");
        std::fs::write(&cat, "id,class,mass\n").unwrap();
        let text = format!(
            "output = \"out\"\n{}\n[[catalogue]]\npath = \"a.csv\"\n",
            defaults_toml()
        );
        let cfg = Config::from_toml_str(&text).unwrap();
        let s = settings_from_config(&dir.path().join("c.toml"), &cfg).unwrap();
        assert_eq!(s.upsilon, DEFAULT_UPSILON);
        assert_eq!(s.tau, DEFAULT_TAU);
        assert_eq!(
            format!("{:?}", s.theory),
            format!("{:?}", TheorySettings::default())
        );
        assert_eq!(
            format!("{:?}", s.statistics),
            format!("{:?}", StatisticsSettings::default())
        );
        assert_eq!(cfg.alarms, AlarmConfig::default());
    }
}
