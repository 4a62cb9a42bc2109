//! The report's content, once, as a small tree of blocks that both renderers walk.
//!
//! Building the words and tables in one place is what keeps `report.html` and `report.md` the
//! same report. Text in the tree is raw (unescaped); each renderer escapes it for its format.
//!
//! ```ignore
//! let doc = build(&input, &map, allowed_svg, bounds_svg, Vec::new());
//! let html = html::render(&doc);
//! let md = markdown::render(&doc);
//! ```

use super::figures::outline_style_name;
use super::input::{AllowedMap, AllowedRange, ReportInput, Shift, SideBySide, Warning};
use super::text::{fmt_end, fmt_opt, fmt_param, fmt_prob, fmt_sig};

/// A run of text with its emphasis.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Inline {
    Text(String),
    Strong(String),
    Code(String),
}

/// A paragraph or table cell: a sequence of inline runs.
pub(crate) type Para = Vec<Inline>;

fn t(s: impl Into<String>) -> Inline {
    Inline::Text(s.into())
}
fn b(s: impl Into<String>) -> Inline {
    Inline::Strong(s.into())
}
fn code(s: impl Into<String>) -> Inline {
    Inline::Code(s.into())
}

/// How a callout box looks.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Callout {
    /// The summary box at the top.
    Summary,
    /// The plain banner when no grid point is consistent with the data.
    Alarm,
    /// Warnings raised by the confrontation.
    Warning,
}

/// Which figure a block holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum FigureKind {
    Allowed,
    AllowedZoom,
    Bounds,
    ProfileTau0,
    WdMassRadius,
    MassBounds,
}

impl FigureKind {
    /// File stem of the figure's SVG and PNG files.
    pub fn stem(self) -> &'static str {
        match self {
            FigureKind::Allowed => "allowed",
            FigureKind::AllowedZoom => "allowed_zoom",
            FigureKind::Bounds => "bounds",
            FigureKind::ProfileTau0 => "profile_tau0",
            FigureKind::WdMassRadius => "wd_mass_radius",
            FigureKind::MassBounds => "mass_bounds",
        }
    }
}

/// One block of the report.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum Block {
    Title(String),
    /// The one volatile line (generation time).
    Generated(String),
    Heading(String),
    Subheading(String),
    Para(Para),
    List(Vec<Para>),
    /// Header cells, rows of cells, and which columns are numeric (right-aligned).
    Table {
        header: Vec<String>,
        rows: Vec<Vec<Para>>,
        numeric: Vec<bool>,
    },
    Callout {
        kind: Callout,
        title: String,
        body: Vec<Block>,
    },
    /// A figure: its SVG text (trusted: produced by our plotting code, which escapes its text)
    /// and caption.
    Figure {
        kind: FigureKind,
        svg: String,
        alt: String,
        caption: Para,
    },
}

/// The report as a list of blocks.
pub(crate) struct Document {
    pub title: String,
    pub blocks: Vec<Block>,
}

const MAX_IDS_LISTED: usize = 20;

fn id_list(ids: &[String]) -> String {
    let mut s = ids
        .iter()
        .take(MAX_IDS_LISTED)
        .cloned()
        .collect::<Vec<_>>()
        .join(", ");
    if ids.len() > MAX_IDS_LISTED {
        s.push_str(&format!(" and {} more", ids.len() - MAX_IDS_LISTED));
    }
    s
}

/// The table of a region's extent per level (the allowed region, or a credible region): one
/// row per level with its ϒ and τ ranges and its share of the grid.
fn range_table(first_header: &str, ranges: &[AllowedRange]) -> Block {
    Block::Table {
        header: vec![
            first_header.into(),
            "ϒ min".into(),
            "ϒ max".into(),
            "τ min".into(),
            "τ max".into(),
            "fraction of grid".into(),
        ],
        rows: ranges
            .iter()
            .map(|a| {
                vec![
                    vec![t(a.level.clone())],
                    vec![t(fmt_opt(a.upsilon_min, 4))],
                    vec![t(fmt_opt(a.upsilon_max, 4))],
                    vec![t(fmt_opt(a.tau_min, 4))],
                    vec![t(fmt_opt(a.tau_max, 4))],
                    vec![t(fmt_sig(a.fraction_of_grid, 3))],
                ]
            })
            .collect(),
        numeric: vec![false, true, true, true, true, true],
    }
}

fn interval_text(lower: Option<f64>, upper: Option<f64>) -> String {
    format!("[{}, {}]", fmt_end(lower), fmt_end(upper))
}

fn sigma(x: Option<f64>) -> String {
    match x {
        Some(v) => format!("{} σ", fmt_sig(v, 3)),
        None => "—".into(),
    }
}

/// Builds the report from the prepared data, the two rendered SVG figures and the section on
/// the data against the theory (placed before the predicted bounds).
pub(crate) fn build(
    input: &ReportInput,
    map: &AllowedMap,
    allowed_svg: String,
    bounds_svg: String,
    zoom_section: Vec<Block>,
    data_section: Vec<Block>,
) -> Document {
    let mut blocks = Vec::new();
    let cl95 = map.levels[1].label.clone();

    blocks.push(Block::Title(input.title.clone()));
    blocks.push(Block::Para(vec![
        t("dwarfbound "),
        t(input.version.clone()),
        t(" · anisotropy ansatz: "),
        t(input.grid.anisotropy.clone()),
        t(" (τ is its strength)."),
    ]));
    blocks.push(Block::Generated(input.generated_at.clone()));

    // The plain banner first when nothing fits.
    let cons = &input.consistency;
    if !cons.consistent {
        let mut body = vec![Block::Para(vec![
            t("No grid point is consistent with the data at "),
            t(cl95.clone()),
            t(". At the best fit the smallest probability of consistency, corrected for the "),
            t(cons.n_informative.to_string()),
            t(" informative objects (Šidák), gives p = "),
            t(fmt_prob(cons.p_catalogue)),
            t(
                ", below 0.0455. The Δχ² maps below are relative and still show an allowed \
               region, but no point of the grid describes every object.",
            ),
        ])];
        if !cons.worst_objects.is_empty() {
            body.push(Block::Para(vec![t(
                "Objects responsible (smallest probability first):",
            )]));
            body.push(Block::List(
                cons.worst_objects
                    .iter()
                    .map(|w| {
                        vec![
                            b(w.id.clone()),
                            t(" ("),
                            t(w.class.clone()),
                            t(format!("): P = {}", fmt_prob(w.probability))),
                        ]
                    })
                    .collect(),
            ));
            body.push(Block::Para(vec![t(
                "Check these first: a measurement problem, a misclassified object, or physics \
                 outside the model.",
            )]));
        }
        blocks.push(Block::Callout {
            kind: Callout::Alarm,
            title: format!("Not consistent at {cl95}"),
            body,
        });
    }

    // Summary box.
    let bf = &input.best_fit;
    let mut summary: Vec<Para> = Vec::new();
    summary.push(if cons.n_informative == 0 {
        vec![
            b("Verdict: "),
            b("no information"),
            t(" — no object constrains the bounds on this grid, so nothing is tested."),
        ]
    } else if cons.consistent {
        vec![
            b("Verdict: "),
            t(format!(
                "consistent — some grid point agrees with every object at {cl95} (Šidák-corrected \
                 p = {} over {} informative objects).",
                fmt_prob(cons.p_catalogue),
                cons.n_informative
            )),
        ]
    } else {
        vec![
            b("Verdict: "),
            b(format!("not consistent at {cl95}")),
            t(format!(
                " (Šidák-corrected p = {} over {} informative objects; see the banner above).",
                fmt_prob(cons.p_catalogue),
                cons.n_informative
            )),
        ]
    });
    let mut best = vec![
        b("Best fit: "),
        t(format!(
            "ϒ = {}, τ = {} (−2 ln L = {})",
            fmt_param(bf.upsilon),
            fmt_param(bf.tau),
            fmt_sig(bf.minus_two_ln_l, 5)
        )),
    ];
    if cons.n_informative == 0 {
        // The likelihood is flat: its "minimum" is the first grid point, which means nothing.
        best = vec![
            b("Best fit: "),
            t("none — without an informative object the likelihood is flat over the grid."),
        ];
    } else if let Some(n) = &bf.not_unique {
        // A plateau: the lowest point is rounding noise, not a finding.
        best = vec![
            b("Best fit: "),
            t(format!(
                "not unique — {} grid points ({} % of the grid), over ϒ [{}, {}] and τ [{}, {}], \
                 lie within Δχ² ≤ {} of the lowest −2 ln L ({} at ϒ = {}, τ = {}): the data do \
                 not single out a point there.",
                n.n_points,
                fmt_sig(100.0 * n.fraction_of_grid, 3),
                fmt_param(n.upsilon.0),
                fmt_param(n.upsilon.1),
                fmt_param(n.tau.0),
                fmt_param(n.tau.1),
                n.dchi2,
                fmt_sig(bf.minus_two_ln_l, 5),
                fmt_param(bf.upsilon),
                fmt_param(bf.tau),
            )),
        ];
    } else if bf.on_grid_edge {
        best.push(t(
            "; on the edge of the grid, so the minimum may lie outside it — widen the grid.",
        ));
    } else {
        best.push(t("."));
    }
    summary.push(best);
    let intervals = &input.upsilon_interval_at_tau0;
    let main_interval = intervals
        .iter()
        .find(|i| i.level == cl95)
        .or_else(|| intervals.get(1))
        .or_else(|| intervals.first());
    if let Some(main) = main_interval {
        let mut p = vec![
            b(format!("ϒ at τ = 0 ({}, one parameter): ", main.level)),
            t(interval_text(main.lower, main.upper)),
        ];
        let others: Vec<String> = intervals
            .iter()
            .filter(|i| i.level != main.level)
            .map(|i| format!("{}: {}", i.level, interval_text(i.lower, i.upper)))
            .collect();
        if !others.is_empty() {
            p.push(t(format!("; {}", others.join("; "))));
        }
        if main.lower.is_none() || main.upper.is_none() {
            p.push(t(". “open”: the grid does not close that end."));
        } else {
            p.push(t("."));
        }
        // An end that one object alone holds is a finding about that object as much as about
        // gravity: say so where the interval is read, not only in the drivers' table.
        let single: Vec<String> = input
            .drivers
            .iter()
            .filter(|d| d.shift == Shift::EndOpensOrCloses)
            // "spin, break-up (one-sided)" reads "spin, break-up, one-sided" inside the brackets.
            .map(|d| {
                let test = d.test.replace(" (", ", ");
                format!("{} ({})", d.id, test.trim_end_matches(')'))
            })
            .collect();
        if !single.is_empty() {
            p.push(t(format!(
                " An end rests on single objects: leaving out {} opens or closes it (see Drivers).",
                single.join(", ")
            )));
        }
        summary.push(p);
    }
    let sg = &input.standard_gravity;
    let dchi = sg
        .delta_chi2
        .map(|d| format!(" (Δχ² = {})", fmt_sig(d, 3)))
        .unwrap_or_default();
    summary.push(match sg.allowed_cl95 {
        Some(true) => vec![
            b("Standard gravity (ϒ = τ = 0): "),
            t(format!("allowed at {cl95}{dchi}.")),
        ],
        Some(false) => vec![
            b("Standard gravity (ϒ = τ = 0): "),
            b(format!("excluded at {cl95}")),
            t(format!("{dchi}.")),
        ],
        None => vec![
            b("Standard gravity (ϒ = τ = 0): "),
            t("not evaluated (not on the grid or no model there)."),
        ],
    });
    let n_t = input.tensions.rows.len();
    summary.push(vec![
        b("Tensions: "),
        t(format!(
            "{} object{} above {} σ at standard gravity.",
            n_t,
            if n_t == 1 { "" } else { "s" },
            fmt_sig(input.tensions.threshold_sigma, 3)
        )),
    ]);
    if !input.warnings.is_empty() {
        summary.push(vec![
            b("Warnings: "),
            t(format!("{} (listed below).", input.warnings.len())),
        ]);
    }
    blocks.push(Block::Callout {
        kind: Callout::Summary,
        title: "Summary".into(),
        body: vec![Block::List(summary)],
    });

    if !input.warnings.is_empty() {
        blocks.push(Block::Callout {
            kind: Callout::Warning,
            title: "Warnings".into(),
            body: vec![Block::List(
                input.warnings.iter().map(warning_text).collect(),
            )],
        });
    }

    if let Some(lines) = &input.since_previous {
        blocks.push(Block::Heading("Since the previous run".into()));
        if lines.is_empty() {
            blocks.push(Block::Para(vec![t(
                "Nothing changed: same objects, same tensions, same allowed region.",
            )]));
        } else {
            blocks.push(Block::List(
                lines.iter().map(|l| vec![t(l.clone())]).collect(),
            ));
        }
    }

    // The map.
    blocks.push(Block::Heading("Allowed region".into()));
    let missing = map.delta_chi2.iter().filter(|v| v.is_none()).count();
    let lv = &map.levels;
    let mut caption = vec![t(format!(
        "Joint Δχ² over ϒ and τ ({} ansatz). Filled: allowed at {} (darkest), {} and {} \
         (lightest), two-parameter Δχ² ≤ {}, {}, {}; white: excluded at {}.",
        map.anisotropy_name,
        lv[0].label,
        lv[1].label,
        lv[2].label,
        fmt_sig(lv[0].threshold, 5),
        fmt_sig(lv[1].threshold, 5),
        fmt_sig(lv[2].threshold, 5),
        lv[2].label
    ))];
    if !map.class_outlines.is_empty() && map.is_two_dimensional() {
        let parts: Vec<String> = map
            .class_outlines
            .iter()
            .enumerate()
            .map(|(k, c)| format!("{} ({})", c.class_label, outline_style_name(k)))
            .collect();
        caption.push(t(format!(
            " Thin lines: each class's own region at {}: {}.",
            lv[1].label,
            parts.join(", ")
        )));
    }
    if !map.is_two_dimensional() {
        caption.push(t(
            " The grid has a single row or column, so each point is drawn as a square in the \
             colour of its level.",
        ));
    }
    caption.push(t(
        " Diamond: standard gravity (ϒ = τ = 0); circled cross: best fit.",
    ));
    if missing > 0 {
        caption.push(t(format!(
            " Hatched: {missing} grid point{} without a model (no solution there; not a constraint).",
            if missing == 1 { "" } else { "s" }
        )));
    }
    blocks.push(Block::Figure {
        kind: FigureKind::Allowed,
        svg: allowed_svg,
        alt: "Allowed-region map in the (ϒ, τ) plane".into(),
        caption,
    });
    blocks.extend(zoom_section);
    blocks.push(Block::Subheading("Extent of the allowed region".into()));
    blocks.push(range_table("level", &input.allowed));
    blocks.push(Block::Para(vec![t(
        "Grid extent of the points allowed at each level (two-parameter Δχ²); a value at a grid \
         end means the region may continue beyond the grid.",
    )]));
    blocks.push(Block::Subheading("ϒ at τ = 0".into()));
    if intervals.is_empty() {
        blocks.push(Block::Para(vec![t(
            "Not computed: the grid has no τ = 0 row with a model on at least two ϒ values, so \
             no one-parameter interval in ϒ (and no driver analysis) follows from this grid.",
        )]));
    } else {
        blocks.push(Block::Table {
            header: vec!["level".into(), "lower".into(), "upper".into()],
            rows: intervals
                .iter()
                .map(|i| {
                    vec![
                        vec![t(i.level.clone())],
                        vec![t(fmt_end(i.lower))],
                        vec![t(fmt_end(i.upper))],
                    ]
                })
                .collect(),
            numeric: vec![false, true, true],
        });
        blocks.push(Block::Para(vec![t(
            "One-parameter Δχ² along τ = 0 (thresholds 1, 4, 9). “open”: the grid does not close \
         that end, so no bound on that side follows from these data and this grid.",
        )]));
    }
    if let Some(sb) = &input.side_by_side {
        side_by_side_blocks(sb, &mut blocks);
    }

    blocks.extend(data_section);
    // The bounds figure.
    blocks.push(Block::Heading("Predicted bounds".into()));
    blocks.push(Block::Figure {
        kind: FigureKind::Bounds,
        svg: bounds_svg,
        alt: "Predicted bounds against ϒ for several τ".into(),
        caption: vec![t(
            "The bounds the objects are confronted with, against ϒ at a few values of τ, as \
             predicted by the model stated below (without their theory floors).",
        )],
    });

    // Tensions.
    blocks.push(Block::Heading("Tensions with standard gravity".into()));
    let thr = fmt_sig(input.tensions.threshold_sigma, 3);
    if input.tensions.rows.is_empty() {
        blocks.push(Block::Para(vec![t(format!(
            "No object is in tension above {thr} σ at ϒ = τ = 0."
        ))]));
    } else {
        let mass: Vec<&super::input::TensionRow> = input
            .tensions
            .rows
            .iter()
            .filter(|r| !r.two_sided)
            .collect();
        let radius: Vec<&super::input::TensionRow> =
            input.tensions.rows.iter().filter(|r| r.two_sided).collect();
        let table = |rows: &[&super::input::TensionRow], what: &str| Block::Table {
            header: vec![
                "id".into(),
                "class".into(),
                if what == "mass" {
                    "mass".into()
                } else {
                    "mass; radius".into()
                },
                format!(
                    "σ at ϒ = τ = 0 ({})",
                    if what == "mass" {
                        "one-sided"
                    } else {
                        "two-sided, signed"
                    }
                ),
                format!(
                    "σ at best fit ({})",
                    if what == "mass" {
                        "one-sided"
                    } else {
                        "two-sided, signed"
                    }
                ),
            ],
            rows: rows
                .iter()
                .map(|r| {
                    vec![
                        vec![code(r.id.clone())],
                        vec![t(r.class.clone())],
                        vec![t(r.mass_text.clone())],
                        vec![t(sigma(Some(r.sigma_standard_gravity)))],
                        vec![t(sigma(r.sigma_best_fit))],
                    ]
                })
                .collect(),
            numeric: vec![false, false, false, true, true],
        };
        blocks.push(Block::Para(vec![t(format!(
            "Objects in tension above {thr} σ at ϒ = τ = 0. Look at these first: a measurement \
             problem, a misclassified object, or physics."
        ))]));
        if !mass.is_empty() {
            blocks.push(Block::Subheading("Mass bounds (one-sided tensions)".into()));
            blocks.push(Block::Para(vec![t(
                "Tension of each object with its class's bound, z = −Φ⁻¹(P): one-sided, \
                 positive when the object sits on the wrong side of the bound; objects on the \
                 allowed side have negative z and are never listed. Computed for each object \
                 alone, with the bound's whole theory floor as its error (the shared shift at its \
                 prior, which for one object is the same as a per-object floor) and a flat prior \
                 on its true mass, so that it does not depend on the other objects; objects.csv \
                 also gives the tension at the best fit under the likelihood used \
                 (sigma_best_in_fit).",
            )]));
            blocks.push(table(&mass, "mass"));
        }
        if !radius.is_empty() {
            blocks.push(Block::Subheading(
                "White-dwarf mass–radius relation (two-sided, signed tensions)".into(),
            ));
            blocks.push(Block::Para(vec![t(
                "Tension of a white dwarf's measured radius with the model radius at its mass, \
                 (R_obs − R_model)/σ: two-sided and signed, positive when the star is larger \
                 than the model; listed when |σ| exceeds the threshold.",
            )]));
            blocks.push(table(&radius, "radius"));
        }
    }

    // Drivers.
    blocks.push(Block::Heading("Drivers".into()));
    if intervals.is_empty() {
        blocks.push(Block::Para(vec![t(
            "Not computed: there is no ϒ interval at τ = 0 on this grid.",
        )]));
    } else if input.drivers.is_empty() {
        let main_open = intervals
            .iter()
            .find(|i| i.level == cl95)
            .is_some_and(|i| i.lower.is_none() && i.upper.is_none());
        blocks.push(Block::Para(vec![t(if main_open {
            // Nothing to move: saying that no object moves it would read as robustness.
            format!(
                "None: the {cl95} interval in ϒ at τ = 0 is open at both ends on this grid, so \
                 there is no end for an object to move."
            )
        } else {
            format!("No single object moves the {cl95} interval in ϒ at τ = 0 when left out.")
        })]));
    } else {
        blocks.push(Block::Para(vec![t(format!(
            "Leave-one-out influence: how far the {cl95} interval in ϒ at τ = 0 moves when one \
             object's test is left out (the larger shift of its two ends), under the likelihood \
             the run uses (a shared shift is eliminated again without the object; a calibrated \
             bound keeps its mass function). The σ is that of the test the object drives through, at the best fit: \
             a mass bound's one-sided tension under the likelihood used, or a white dwarf's \
             signed, two-sided radius tension."
        ))]));
        blocks.push(Block::Table {
            header: vec![
                "rank".into(),
                "id".into(),
                "class".into(),
                "shift of the interval".into(),
                "test (sidedness)".into(),
                "σ of that test at best fit".into(),
            ],
            rows: input
                .drivers
                .iter()
                .map(|d| {
                    let shift = match d.shift {
                        Shift::Finite(x) => fmt_sig(x, 3),
                        Shift::EndOpensOrCloses => "an end opens or closes".into(),
                    };
                    vec![
                        vec![t(d.rank.to_string())],
                        vec![code(d.id.clone())],
                        vec![t(d.class.clone())],
                        vec![t(shift)],
                        vec![t(d.test.clone())],
                        vec![t(sigma(d.sigma_best_fit))],
                    ]
                })
                .collect(),
            numeric: vec![true, false, false, true, false, true],
        });
    }

    // Per-class contributions.
    blocks.push(Block::Heading("What each class constrains".into()));
    if input.class_contributions.is_empty() {
        blocks.push(Block::Para(vec![t("No class contributed.")]));
    } else {
        blocks.push(Block::Table {
            header: vec![
                "class".into(),
                "objects".into(),
                "informative".into(),
                "−2 ln L at best fit".into(),
                "outline on the map".into(),
                "constrains".into(),
            ],
            rows: input
                .class_contributions
                .iter()
                .map(|c| {
                    let outline = map
                        .class_outlines
                        .iter()
                        .position(|o| o.class_label == c.class)
                        .filter(|_| map.is_two_dimensional())
                        .map(|k| outline_style_name(k).to_string())
                        .unwrap_or_else(|| "—".into());
                    vec![
                        vec![t(c.class.clone())],
                        vec![t(c.n_objects.to_string())],
                        vec![t(c.n_informative.to_string())],
                        vec![t(fmt_sig(c.minus_two_ln_l_at_best_fit, 4))],
                        vec![t(outline)],
                        vec![t(c.summary.clone())],
                    ]
                })
                .collect(),
            numeric: vec![false, true, true, true, false, false],
        });
    }

    // Model.
    blocks.push(Block::Heading("Model and assumptions".into()));
    let m = &input.model;
    let mut items: Vec<Para> = [
        ("Structure", &m.structure),
        ("Anisotropy", &m.anisotropy_ansatz),
        ("MMHB model", &m.mmhb_model),
        ("MMHB mode", &m.mmhb_mode),
        ("MMHB anchor", &m.mmhb_anchor),
        ("Theory floors", &m.theory_floor),
        ("White dwarfs", &m.white_dwarf),
        ("Likelihood", &m.likelihood),
    ]
    .into_iter()
    .filter(|(_, v)| !v.is_empty())
    .map(|(k, v)| vec![b(format!("{k}: ")), t(v.clone())])
    .collect();
    for (k, v) in &m.extra {
        items.push(vec![b(format!("{k}: ")), t(v.clone())]);
    }
    blocks.push(Block::List(items));

    // Grid.
    blocks.push(Block::Heading("Grid".into()));
    let g = &input.grid;
    let mut grid_items = vec![
        vec![
            b("ϒ: "),
            t(format!(
                "{} to {} in {} points",
                fmt_param(g.upsilon.start),
                fmt_param(g.upsilon.stop),
                g.upsilon.count
            )),
        ],
        vec![
            b("τ: "),
            t(format!(
                "{} to {} in {} points",
                fmt_param(g.tau.start),
                fmt_param(g.tau.stop),
                g.tau.count
            )),
        ],
        vec![b("Anisotropy ansatz: "), t(g.anisotropy.clone())],
        vec![
            b("Points without a model: "),
            t(g.points_without_model.to_string()),
        ],
    ];
    grid_items.push(match &input.reduction_error {
        Some(r) if !r.terms.is_empty() => {
            let parts: Vec<String> = r
                .terms
                .iter()
                .map(|x| {
                    format!(
                        "{} ({}): {} nodes in the bound{}, {} check points, {} in Δχ²",
                        x.bound,
                        x.likelihood,
                        x.data_nodes,
                        match x.table_nodes {
                            Some(n) => format!(", the shared shift eliminated on {n} nodes"),
                            None => String::new(),
                        },
                        x.check_points,
                        fmt_sig(x.max_abs_delta_chi2, 2)
                    )
                })
                .collect();
            vec![
                b("Reduction error: "),
                t(format!(
                    "each bound's term of the likelihood was tabulated in the bound's value and \
                     interpolated; the largest difference from its direct evaluation found at \
                     the check points — {}.",
                    parts.join("; ")
                )),
            ]
        }
        _ => vec![
            b("Reduction error: "),
            t("not applicable (the likelihood was summed directly)."),
        ],
    });
    blocks.push(Block::List(grid_items));

    // Inputs.
    blocks.push(Block::Heading("Inputs".into()));
    blocks.push(Block::Table {
        header: vec![
            "catalogue".into(),
            "rows read".into(),
            "accepted".into(),
            "quarantined".into(),
            "SHA-256".into(),
        ],
        rows: input
            .catalogues
            .iter()
            .map(|c| {
                vec![
                    vec![code(c.path.clone())],
                    vec![t(c.rows_in.to_string())],
                    vec![t(c.rows_accepted.to_string())],
                    vec![t(c.rows_quarantined.to_string())],
                    vec![code(c.sha256.clone())],
                ]
            })
            .collect(),
        numeric: vec![false, true, true, true, false],
    });
    blocks.push(Block::Para(vec![
        t("Rejected rows and their reasons are in "),
        code("quarantine.csv"),
        t("; every accepted object is in "),
        code("objects.csv"),
        t(" and every grid point in "),
        code("grid.csv"),
        t("."),
    ]));

    // Cautions.
    blocks.push(Block::Heading("Cautions".into()));
    blocks.push(Block::List(cautions(input)));

    Document {
        title: input.title.clone(),
        blocks,
    }
}

/// The table of one-parameter intervals beside the τ = 0 slice, how to read it, the
/// posterior's regions and priors, and which formulas the drivers and tensions use.
fn side_by_side_blocks(sb: &SideBySide, blocks: &mut Vec<Block>) {
    blocks.push(Block::Subheading(
        "The same question, read three ways".into(),
    ));
    let levels: Vec<String> = sb
        .rows
        .first()
        .map(|r| r.intervals.iter().map(|i| i.level.clone()).collect())
        .unwrap_or_default();
    let mut header = vec!["parameter".into(), "reading".into()];
    header.extend(levels.iter().cloned());
    let mut numeric = vec![false, false];
    numeric.extend(levels.iter().map(|_| true));
    blocks.push(Block::Table {
        header,
        rows: sb
            .rows
            .iter()
            .map(|r| {
                let mut row = vec![vec![t(r.parameter.clone())], vec![t(r.method.clone())]];
                row.extend(
                    r.intervals
                        .iter()
                        .map(|i| vec![t(interval_text(i.lower, i.upper))]),
                );
                row
            })
            .collect(),
        numeric,
    });
    blocks.push(Block::Para(vec![
        b("How to read them. "),
        t(
            "The slice fixes τ = 0; the profile lets the other parameter take its best value at \
             each point (a confidence interval, no prior); the posterior averages over the other \
             parameter with the flat priors below (a credible interval, which depends on the \
             grid's ranges). Where they agree the answer does not hinge on the method; where the \
             profile or posterior is wider than the slice, the τ = 0 interval owes its width to \
             fixing τ. “open”: the interval reaches the grid edge.",
        ),
    ]));
    blocks.push(Block::Para(vec![b("Priors. "), t(sb.prior.clone())]));
    if !sb.hpd_regions.is_empty() {
        blocks.push(range_table(
            "credible region (highest posterior density)",
            &sb.hpd_regions,
        ));
    }
    if !sb.formulas.is_empty() {
        blocks.push(Block::List(
            sb.formulas.iter().map(|f| vec![t(f.clone())]).collect(),
        ));
    }
}

fn warning_text(w: &Warning) -> Para {
    match w {
        Warning::Crowding {
            n_hburning,
            n_brown_dwarf,
        } => vec![
            b("Crowded bound: "),
            t(format!(
                "{n_hburning} hydrogen-burning and {n_brown_dwarf} brown-dwarf informative \
                 objects lie within 3 σ of the MMHB at the best fit. With many objects of both \
                 classes near the bound at unequal densities the default likelihood is pulled \
                 toward the side with fewer objects and its coverage can fail; see the \
                 calibration caution and consider the population-aware likelihood."
            )),
        ],
        Warning::PostNewtonianWhiteDwarf {
            ids,
            compactness_threshold,
        } => vec![
            b("Compact white dwarfs: "),
            t(format!(
                "{} white dwarf{} with GM/(Rc²) above {} ({}): post-Newtonian corrections may \
                 matter and the Chandrasekhar-mass test is model-limited for {}.",
                ids.len(),
                if ids.len() == 1 { "" } else { "s" },
                fmt_sig(*compactness_threshold, 3),
                id_list(ids),
                if ids.len() == 1 { "it" } else { "them" }
            )),
        ],
        Warning::BelowRelativisticExistenceBound {
            upsilon_bound,
            source,
        } => vec![
            b("Existence bound: "),
            t(format!(
                "part of the grid lies below ϒ = {}, the relativistic existence bound ({}). That \
                 range is theoretically disfavoured; it is shown, not used to cut the statistics.",
                fmt_param(*upsilon_bound),
                source
            )),
        ],
        Warning::Other(s) => vec![t(s.clone())],
    }
}

fn cautions(input: &ReportInput) -> Vec<Para> {
    let mut c: Vec<Para> = vec![
        vec![
            b("Idealised models. "),
            t(
                "Polytropic and analytic models are idealised; constraints depend on the stated \
                 model assumptions. A different structure model, MMHB model, anchor or theory \
                 floor moves the bounds and with them every region in this report.",
            ),
        ],
        vec![
            b("Approximate confidence levels. "),
            t(
                "The likelihood is a product of one-sided probabilities (cumulative \
                 distributions) and is often flat over wide regions; reading Δχ² as a confidence \
                 level (Wilks' theorem) is then only approximate. Treat the levels as indicative. \
                 On a bound faced from one side only (white dwarfs below the Chandrasekhar mass, \
                 no class above it) the likelihood is that of the population truncated at the \
                 bound (project docs, docs/bounds.md §8.12): it is flat once the bound has \
                 passed the data, so the truth often sits where Δχ² is zero and the intervals \
                 there are conservative (measured coverage 95.5–98 % at the nominal 95.45 %).",
            ),
        ],
        vec![
            b("Relative regions. "),
            t(
                "Δχ² is measured from the best grid point, so some region is always “allowed”; \
                 whether any point fits at all is the absolute test in the summary.",
            ),
        ],
        vec![
            b("Newtonian order. "),
            t(
                "White-dwarf bounds are computed at Newtonian order; post-Newtonian corrections, \
                 which can be important for white dwarfs in this class of theories, are not \
                 included.",
            ),
        ],
    ];
    if input
        .warnings
        .iter()
        .any(|w| matches!(w, Warning::Crowding { .. }))
    {
        c.push(vec![
            b("Calibration. "),
            t(
                "The product of consistency probabilities is the likelihood of the class labels \
                 given the measured masses with a flat prior on each true mass. It is calibrated \
                 when few objects lie near each bound or the mass density is flat across it. \
                 Here many objects of both classes crowd the MMHB: with unequal densities on the \
                 two sides the best fit is biased toward the sparser side and the nominal \
                 coverage can collapse. The population-aware likelihood removes that bias.",
            ),
        ]);
    }
    for extra in &input.cautions {
        c.push(vec![t(extra.clone())]);
    }
    c
}
