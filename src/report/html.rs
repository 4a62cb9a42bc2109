//! Renders the report as one self-contained HTML page.
//!
//! Everything is inline: the CSS in a `<style>` element, the figures as `<svg>` elements. The
//! page loads nothing (a content-security policy of `default-src 'none'` makes sure of it) and
//! runs no script. All text from the input is escaped; the only unescaped markup is the SVG our
//! own plotting code produced.
//!
//! ```ignore
//! let page = render(&document);
//! assert!(page.starts_with("<!DOCTYPE html>"));
//! ```

use std::fmt::Write;

use super::document::{Block, Callout, Document, Inline, Para};
use super::text::escape_html;
use super::VOLATILE_MARKER;

const CSS: &str = r#"
:root { color-scheme: light; }
body { font-family: "DejaVu Sans", "Segoe UI", "Helvetica Neue", Arial, sans-serif;
       color: #16161a; background: #ffffff; margin: 0; line-height: 1.5; font-size: 16px; }
main { max-width: 1080px; margin: 0 auto; padding: 24px 28px 48px; }
h1 { font-size: 1.75rem; margin: 0 0 0.3rem; }
h2 { font-size: 1.3rem; margin: 2.2rem 0 0.6rem; padding-bottom: 0.2rem;
     border-bottom: 2px solid #1b3a6b; }
h3 { font-size: 1.05rem; margin: 1.4rem 0 0.4rem; }
p.meta, p.generated { color: #4a4a55; margin: 0.1rem 0; font-size: 0.92rem; }
section.callout { border: 1px solid #9aa7b8; border-left: 8px solid #1b3a6b;
                  background: #f3f6fa; padding: 0.6rem 1.1rem; margin: 1.2rem 0; }
section.callout h2 { border: none; margin: 0.2rem 0 0.4rem; font-size: 1.2rem; }
section.alarm { border: 3px solid #111111; border-left: 12px solid #111111;
                background: #fff4dc; }
section.alarm h2::before { content: "\26A0\FE0E  "; }
section.warning { border-left-color: #8a5a00; background: #fbf7ee; }
section.callout ul { margin: 0.2rem 0; padding-left: 1.2rem; }
section.callout li { margin: 0.25rem 0; }
figure { margin: 1rem 0; }
figure .plot svg { max-width: 100%; height: auto; display: block;
                   border: 1px solid #d5d9e0; }
figcaption { font-size: 0.92rem; color: #33333d; margin-top: 0.4rem; }
table { border-collapse: collapse; margin: 0.6rem 0; font-size: 0.93rem; }
th, td { border: 1px solid #c9ced6; padding: 0.3rem 0.6rem; vertical-align: top; text-align: left; }
th { background: #e6ebf2; }
tbody tr:nth-child(even) td { background: #f7f8fa; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
code { font-family: "DejaVu Sans Mono", Menlo, Consolas, monospace; font-size: 0.88em;
       overflow-wrap: anywhere; }
"#;

fn inline(out: &mut String, para: &Para) {
    for run in para {
        match run {
            Inline::Text(s) => out.push_str(&escape_html(s)),
            Inline::Strong(s) => {
                let _ = write!(out, "<strong>{}</strong>", escape_html(s));
            }
            Inline::Code(s) => {
                let _ = write!(out, "<code>{}</code>", escape_html(s));
            }
        }
    }
}

/// Makes our own SVG suitable for inlining: drops the namespace attribute (implied in HTML) and
/// any XML declaration, so the page holds no URL at all.
fn inline_svg(svg: &str) -> String {
    let s = svg.trim_start();
    let s = match s.strip_prefix("<?xml") {
        Some(rest) => rest.split_once("?>").map(|(_, r)| r).unwrap_or(rest),
        None => s,
    };
    s.replacen(" xmlns=\"http://www.w3.org/2000/svg\"", "", 1)
        .trim()
        .to_string()
}

fn block(out: &mut String, b: &Block) {
    match b {
        Block::Title(s) => {
            let _ = writeln!(out, "<h1>{}</h1>", escape_html(s));
        }
        Block::Generated(s) => {
            // One line, marked, so comparisons can drop it.
            let _ = writeln!(
                out,
                "<p class=\"generated\">Generated: {} {VOLATILE_MARKER}</p>",
                escape_html(s)
            );
        }
        Block::Heading(s) => {
            let _ = writeln!(out, "<h2>{}</h2>", escape_html(s));
        }
        Block::Subheading(s) => {
            let _ = writeln!(out, "<h3>{}</h3>", escape_html(s));
        }
        Block::Para(p) => {
            out.push_str("<p>");
            inline(out, p);
            out.push_str("</p>\n");
        }
        Block::List(items) => {
            out.push_str("<ul>\n");
            for item in items {
                out.push_str("<li>");
                inline(out, item);
                out.push_str("</li>\n");
            }
            out.push_str("</ul>\n");
        }
        Block::Table {
            header,
            rows,
            numeric,
        } => {
            out.push_str("<table>\n<thead><tr>");
            for h in header {
                let _ = write!(out, "<th scope=\"col\">{}</th>", escape_html(h));
            }
            out.push_str("</tr></thead>\n<tbody>\n");
            for row in rows {
                out.push_str("<tr>");
                for (k, cell) in row.iter().enumerate() {
                    if numeric.get(k).copied().unwrap_or(false) {
                        out.push_str("<td class=\"num\">");
                    } else {
                        out.push_str("<td>");
                    }
                    inline(out, cell);
                    out.push_str("</td>");
                }
                out.push_str("</tr>\n");
            }
            out.push_str("</tbody>\n</table>\n");
        }
        Block::Callout { kind, title, body } => {
            let (class, role) = match kind {
                Callout::Summary => ("callout summary", "region"),
                Callout::Alarm => ("callout alarm", "alert"),
                Callout::Warning => ("callout warning", "note"),
            };
            let _ = writeln!(
                out,
                "<section class=\"{class}\" role=\"{role}\">\n<h2>{}</h2>",
                escape_html(title)
            );
            for inner in body {
                block(out, inner);
            }
            out.push_str("</section>\n");
        }
        Block::Figure {
            kind,
            svg,
            alt,
            caption,
        } => {
            let _ = writeln!(
                out,
                "<figure id=\"figure-{}\">\n<div class=\"plot\" role=\"img\" aria-label=\"{}\">",
                kind.stem(),
                escape_html(alt)
            );
            out.push_str(&inline_svg(svg));
            out.push_str("\n</div>\n<figcaption>");
            inline(out, caption);
            let _ = write!(
                out,
                " Files: <code>{0}.svg</code>, <code>{0}.png</code>.",
                kind.stem()
            );
            out.push_str("</figcaption>\n</figure>\n");
        }
    }
}

/// Renders the whole page.
pub(crate) fn render(doc: &Document) -> String {
    let mut out = String::with_capacity(256 * 1024);
    out.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n");
    out.push_str(
        "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; \
         style-src 'unsafe-inline'\">\n",
    );
    out.push_str("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n");
    let _ = writeln!(out, "<title>{}</title>", escape_html(&doc.title));
    let _ = writeln!(out, "<style>{CSS}</style>\n</head>\n<body>\n<main>");
    for b in &doc.blocks {
        block(&mut out, b);
    }
    out.push_str("</main>\n</body>\n</html>\n");
    out
}
