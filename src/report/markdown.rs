//! Renders the report as Markdown (CommonMark with GitHub tables), for a repository or an email.
//!
//! The same blocks as the HTML page, in the same order; figures become links to the PNG files
//! written beside the report. All text from the input is escaped.
//!
//! ```ignore
//! let md = render(&document);
//! assert!(md.starts_with("# "));
//! ```

use std::fmt::Write;

use super::document::{Block, Callout, Document, Inline, Para};
use super::text::{escape_markdown, escape_markdown_at};
use super::VOLATILE_MARKER;

/// Renders inline runs; `opens_block` when the text starts a paragraph or list item, where a
/// leading `#`, `-` or `1.` would otherwise open a heading or a list (not so in table cells).
fn inline(para: &Para, opens_block: bool) -> String {
    let mut out = String::new();
    for (k, run) in para.iter().enumerate() {
        let esc = |s: &str| escape_markdown_at(s, opens_block && k == 0);
        match run {
            Inline::Text(s) => out.push_str(&esc(s)),
            Inline::Strong(s) => {
                let body = escape_markdown_at(s.trim_end(), false);
                let trailing = &s[s.trim_end().len()..];
                let _ = write!(out, "**{body}**{trailing}");
            }
            // Escaped text rather than a code span: backslash escapes do not work inside code
            // spans, and ids must not be able to close one.
            Inline::Code(s) => out.push_str(&esc(s)),
        }
    }
    out
}

fn block(out: &mut String, b: &Block, prefix: &str) {
    let mut line = |s: &str| {
        if s.is_empty() {
            let _ = writeln!(out, "{}", prefix.trim_end());
        } else {
            let _ = writeln!(out, "{prefix}{s}");
        }
    };
    match b {
        Block::Title(s) => {
            line(&format!("# {}", escape_markdown(s)));
            line("");
        }
        Block::Generated(s) => {
            line(&format!(
                "Generated: {} {VOLATILE_MARKER}",
                escape_markdown(s)
            ));
            line("");
        }
        Block::Heading(s) => {
            line(&format!("## {}", escape_markdown(s)));
            line("");
        }
        Block::Subheading(s) => {
            line(&format!("### {}", escape_markdown(s)));
            line("");
        }
        Block::Para(p) => {
            line(&inline(p, true));
            line("");
        }
        Block::List(items) => {
            for item in items {
                line(&format!("- {}", inline(item, true)));
            }
            line("");
        }
        Block::Table {
            header,
            rows,
            numeric,
        } => {
            let head: Vec<String> = header
                .iter()
                .map(|h| escape_markdown_at(h, false))
                .collect();
            line(&format!("| {} |", head.join(" | ")));
            let rule: Vec<&str> = (0..header.len())
                .map(|k| {
                    if numeric.get(k).copied().unwrap_or(false) {
                        "---:"
                    } else {
                        "---"
                    }
                })
                .collect();
            line(&format!("| {} |", rule.join(" | ")));
            for row in rows {
                let cells: Vec<String> = row.iter().map(|c| inline(c, false)).collect();
                line(&format!("| {} |", cells.join(" | ")));
            }
            line("");
        }
        Block::Callout { kind, title, body } => {
            let mark = match kind {
                Callout::Summary => "",
                Callout::Alarm => "⚠ ",
                Callout::Warning => "",
            };
            line(&format!("> ## {mark}{}", escape_markdown(title)));
            line(">");
            let inner_prefix = format!("{prefix}> ");
            let mut inner = String::new();
            for blk in body {
                block(&mut inner, blk, &inner_prefix);
            }
            // Drop the empty quoted lines after the last inner block.
            let mut lines: Vec<&str> = inner.lines().collect();
            while lines
                .last()
                .is_some_and(|l| l.trim_end() == inner_prefix.trim_end())
            {
                lines.pop();
            }
            let mut inner = lines.join("\n");
            inner.push('\n');
            out.push_str(&inner);
            let _ = writeln!(out, "{}", prefix.trim_end());
        }
        Block::Figure {
            kind, alt, caption, ..
        } => {
            line(&format!("![{}]({}.png)", escape_markdown(alt), kind.stem()));
            line("");
            line(&format!(
                "{} Files: {}.svg, {}.png.",
                inline(caption, true),
                kind.stem(),
                kind.stem()
            ));
            line("");
        }
    }
}

/// Renders the whole document.
pub(crate) fn render(doc: &Document) -> String {
    let mut out = String::with_capacity(32 * 1024);
    for b in &doc.blocks {
        block(&mut out, b, "");
    }
    while out.ends_with("\n\n") {
        out.pop();
    }
    out
}
