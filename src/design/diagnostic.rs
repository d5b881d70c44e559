//! Rendering of design-file problems for the reader of a terminal or a log.
//!
//! Input: a [`DesignError`] and the text of the file it came from. Output: a `String` with,
//! for every problem, a header `FILE, line L, KEY: message (code)`, the offending source line
//! quoted with a `~` marker under the offending text and its column, and a `remedy:` line with
//! what is accepted or what to change; then a one-line count. Colour (ANSI bold for the header,
//! red for the marker) only on request; [`render_for_stderr`] asks for it when standard error
//! is a terminal and `NO_COLOR` is not set (<https://no-color.org>).

use super::problem::{DesignError, Problem};
use std::fmt::Write as _;
use std::io::IsTerminal;
use std::ops::Range;

const BOLD: &str = "\u{1b}[1m";
const RED: &str = "\u{1b}[1;31m";
const RESET: &str = "\u{1b}[0m";
/// Indent of the quoted line and of the marker under it.
const QUOTE: &str = "    ";

/// Renders every problem of `err` against `source`, the text `err` was produced from.
///
/// With `colour` the output carries ANSI colour codes; without, it is plain text. A problem
/// whose span does not fit `source` (a caller passing other text) is still shown, with the
/// line and column it carries and without the quoted line, so nothing is ever dropped.
pub fn render(err: &DesignError, source: &str, colour: bool) -> String {
    let mut out = String::new();
    for p in &err.problems {
        render_one(&mut out, &err.file, p, source, colour);
        out.push('\n');
    }
    let n = err.problems.len();
    let _ = writeln!(
        out,
        "{}: {n} problem{} in the design file",
        err.file,
        if n == 1 { "" } else { "s" }
    );
    out
}

fn render_one(out: &mut String, file: &str, p: &Problem, source: &str, colour: bool) {
    let (bold, red, reset) = if colour {
        (BOLD, RED, RESET)
    } else {
        ("", "", "")
    };
    let key = if p.key.is_empty() {
        String::new()
    } else {
        format!(", {}", p.key)
    };
    let _ = writeln!(
        out,
        "{bold}{file}, line {}{key}: {}{reset} ({})",
        p.line, p.message, p.code
    );
    if let Some((text, lead, width)) = quoted(&p.span, source) {
        let _ = writeln!(out, "{QUOTE}{}", text.trim_end());
        let _ = writeln!(
            out,
            "{QUOTE}{}{red}{}{reset} column {}",
            " ".repeat(lead),
            "~".repeat(width),
            lead + 1
        );
    } else {
        let _ = writeln!(out, "{QUOTE}(column {})", p.column);
    }
    if let Some(h) = &p.help {
        let _ = writeln!(out, "  remedy: {h}");
    }
}

/// The source line holding the start of `span` (tabs shown as one space so that the marker
/// lines up), the characters before the span on that line, and the marker width (at least
/// one, and not past the end of the line). `None` when the span lies outside `source`.
fn quoted(span: &Range<usize>, source: &str) -> Option<(String, usize, usize)> {
    if span.start > source.len() {
        return None;
    }
    let mut start = span.start;
    while !source.is_char_boundary(start) {
        start -= 1;
    }
    let line_start = source[..start].rfind('\n').map_or(0, |i| i + 1);
    let line_end = source[start..]
        .find('\n')
        .map_or(source.len(), |i| start + i);
    let line = source[line_start..line_end].trim_end_matches('\r');
    let lead = source[line_start..start].chars().count();
    let end = span.end.clamp(start, line_end);
    let mut end = end.min(line_start + line.len()).max(start);
    while !source.is_char_boundary(end) {
        end += 1;
    }
    let width = source[start..end].chars().count().max(1);
    Some((line.replace('\t', " "), lead, width))
}

/// Whether diagnostics written to standard error should be coloured: only when it is a
/// terminal and the `NO_COLOR` variable is unset or empty.
pub fn stderr_wants_colour() -> bool {
    let no_color = std::env::var_os("NO_COLOR").is_some_and(|v| !v.is_empty());
    !no_color && std::io::stderr().is_terminal()
}

/// [`render`] with colour decided by [`stderr_wants_colour`].
pub fn render_for_stderr(err: &DesignError, source: &str) -> String {
    render(err, source, stderr_wants_colour())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn problem(span: Range<usize>) -> Problem {
        Problem {
            code: "missing-unit",
            key: "tank.inner_radius".into(),
            line: 2,
            column: 16,
            span,
            message: "`tank.inner_radius = 550` is a bare number".into(),
            help: Some("write the number with a unit, e.g. \"550 mm\"".into()),
        }
    }

    const TEXT: &str = "[tank]\ninner_radius = 550\n";

    #[test]
    fn plain_rendering_has_location_marker_remedy_and_code() {
        let err = DesignError {
            file: "t.toml".into(),
            problems: vec![problem(22..25)],
        };
        let s = render(&err, TEXT, false);
        let want = "t.toml, line 2, tank.inner_radius: `tank.inner_radius = 550` is a bare number \
                    (missing-unit)\n    inner_radius = 550\n                   ~~~ column 16\n  \
                    remedy: write the number with a unit, e.g. \"550 mm\"\n\n\
                    t.toml: 1 problem in the design file\n";
        assert_eq!(s, want);
        assert!(!s.contains('\u{1b}'), "plain output has no escape codes");
    }

    #[test]
    fn colour_rendering_uses_ansi_codes() {
        let err = DesignError {
            file: "t.toml".into(),
            problems: vec![problem(22..25)],
        };
        let s = render(&err, TEXT, true);
        assert!(s.contains("\u{1b}["), "{s}");
        assert!(s.contains("missing-unit"), "{s}");
    }

    #[test]
    fn the_marker_stands_under_the_span_with_tabs_and_wide_characters() {
        let text = "\tk = \"\u{b5}m\"\n";
        let (line, lead, width) = quoted(&(5..9), text).unwrap();
        assert_eq!(line, " k = \"\u{b5}m\"");
        assert_eq!((lead, width), (5, 3));
    }

    #[test]
    fn spans_outside_the_text_or_inside_a_character_still_render() {
        let text = "a = \"\u{b5}\"\n";
        #[allow(clippy::reversed_empty_ranges)]
        let spans = [0..0, 5..6, 6..6, 100..200, 11..11, 7..3];
        for span in spans {
            let err = DesignError {
                file: "u.toml".into(),
                problems: vec![problem(span.clone())],
            };
            let s = render(&err, text, false);
            assert!(s.contains("missing-unit"), "{span:?}: {s}");
            assert!(s.contains("column"), "{span:?}: {s}");
        }
    }
}
