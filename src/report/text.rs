//! Escaping and number formatting shared by the HTML and Markdown renderers.
//!
//! Ids, class labels and paths come from users' files, so every piece of input text is escaped
//! before it reaches a page. Numbers are formatted for reading (the machine-readable files carry
//! round-trip precision); a non-finite value is shown as a dash, never as `NaN`.
//!
//! ```
//! use dwarfbound::report::text::{escape_html, fmt_sig};
//! assert_eq!(escape_html("<b>x&y</b>"), "&lt;b&gt;x&amp;y&lt;/b&gt;");
//! assert_eq!(fmt_sig(0.0123456, 3), "0.0123");
//! ```

/// Escapes text for HTML element content and double- or single-quoted attribute values.
pub fn escape_html(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            c if c.is_control() => out.push(' '),
            c => out.push(c),
        }
    }
    out
}

/// Escapes text for Markdown (CommonMark + GitHub tables) so user text can never open a link,
/// raw HTML, emphasis, code, math or a new table column: a backslash before each of
/// ``\ ` * [ ] < > & | ~ $``, before `_` unless it sits inside a word, and before a leading `#`, `+`, `-`, `=` or list
/// number; line breaks fold to spaces. Other punctuation stays bare so the raw file reads well
/// in an email.
pub fn escape_markdown(s: &str) -> String {
    escape_markdown_at(s, true)
}

/// [`escape_markdown`], with the line-start rules only when `at_line_start` (text that follows
/// other text on its line cannot open a heading or a list).
pub(crate) fn escape_markdown_at(s: &str, at_line_start: bool) -> String {
    let chars: Vec<char> = s.chars().collect();
    let mut out = String::with_capacity(s.len() + 8);
    // Markup that only counts at the start of a line (headings, list markers) counts here too,
    // because user text may open a list item.
    let first = chars.iter().take_while(|c| c.is_whitespace()).count();
    let leading_digits = first
        + chars[first..]
            .iter()
            .take_while(|c| c.is_ascii_digit())
            .count();
    for (k, &c) in chars.iter().enumerate() {
        let word = |j: Option<usize>| {
            j.and_then(|j| chars.get(j))
                .is_some_and(|c| c.is_alphanumeric())
        };
        let escape = match c {
            '\\' | '`' | '*' | '[' | ']' | '<' | '>' | '&' | '|' | '~' | '$' => true,
            '_' => !(word(k.checked_sub(1)) && word(Some(k + 1))),
            '#' | '+' | '-' | '=' => at_line_start && k == first,
            '.' | ')' => at_line_start && k > first && k == leading_digits,
            _ => false,
        };
        if c.is_control() {
            out.push(' ');
            continue;
        }
        if escape {
            out.push('\\');
        }
        out.push(c);
    }
    out
}

/// Formats `x` with about `digits` significant digits: fixed notation for 1e-3 ≤ |x| < 1e6
/// (trailing zeros trimmed), scientific otherwise; `0` for zero and `—` for non-finite values.
pub fn fmt_sig(x: f64, digits: usize) -> String {
    if !x.is_finite() {
        return "—".into();
    }
    if x == 0.0 {
        return "0".into();
    }
    let digits = digits.max(1);
    let a = x.abs();
    if (1e-3..1e6).contains(&a) {
        let mag = a.log10().floor() as i32;
        let decimals = (digits as i32 - 1 - mag).max(0) as usize;
        let s = format!("{x:.decimals$}");
        let s = if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        };
        if s == "-0" {
            "0".into()
        } else {
            s
        }
    } else {
        let s = format!("{:.*e}", digits - 1, x);
        // Trim zeros in the mantissa: 4.900e-12 → 4.9e-12.
        match s.split_once('e') {
            Some((m, e)) if m.contains('.') => {
                format!("{}e{}", m.trim_end_matches('0').trim_end_matches('.'), e)
            }
            _ => s,
        }
    }
}

/// A grid parameter (ϒ or τ) for reading: 4 significant digits.
pub fn fmt_param(x: f64) -> String {
    fmt_sig(x, 4)
}

/// A probability: 4 significant digits, scientific below 1e-3.
pub fn fmt_prob(p: f64) -> String {
    fmt_sig(p, if p < 1e-3 { 3 } else { 4 })
}

/// An optional interval end: the number, or "open" when the grid does not close it.
pub fn fmt_end(x: Option<f64>) -> String {
    match x {
        Some(v) => fmt_param(v),
        None => "open".into(),
    }
}

/// An optional value, or a dash when absent.
pub fn fmt_opt(x: Option<f64>, digits: usize) -> String {
    match x {
        Some(v) => fmt_sig(v, digits),
        None => "—".into(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_digits() {
        assert_eq!(fmt_sig(1.0, 4), "1");
        assert_eq!(fmt_sig(-0.25, 4), "-0.25");
        assert_eq!(fmt_sig(0.074999, 3), "0.075");
        assert_eq!(fmt_sig(123.456, 4), "123.5");
        assert_eq!(fmt_sig(4.9259393e-12, 3), "4.93e-12");
        assert_eq!(fmt_sig(2e-5, 3), "2e-5");
        assert_eq!(fmt_sig(-1e-9, 2), "-1e-9");
        assert_eq!(fmt_sig(f64::NAN, 3), "—");
        assert_eq!(fmt_sig(-0.00001, 1), "-1e-5");
    }

    #[test]
    fn markdown_escape_neutralises_markup() {
        assert_eq!(escape_markdown("a|b"), "a\\|b");
        assert_eq!(escape_markdown("<b>x&y</b>"), "\\<b\\>x\\&y\\</b\\>");
        assert_eq!(escape_markdown("line\nbreak"), "line break");
        assert_eq!(escape_markdown("[x](http://e)"), "\\[x\\](http://e)");
        assert_eq!(escape_markdown("white_dwarf"), "white_dwarf");
        assert_eq!(escape_markdown("_a_"), "\\_a\\_");
        assert_eq!(escape_markdown("# h"), "\\# h");
        assert_eq!(escape_markdown("12. x"), "12\\. x");
    }

    #[test]
    fn html_escape_covers_attributes() {
        assert_eq!(escape_html("\"'"), "&quot;&#39;");
    }
}
