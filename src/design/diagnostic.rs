//! Rendering of design-file problems as source diagnostics.
//!
//! Input: a [`DesignError`] and the text of the file it came from. Output: a `String` with,
//! for every problem, its code and message, the file name, line and column, the source line
//! with the offending text underlined by carets, the key path, and the help; then a one-line
//! count. Rendering is done by `codespan-reporting`; colour (ANSI) only on request.
//! [`render_for_stderr`] asks for colour when standard error is a terminal and `NO_COLOR` is
//! not set (<https://no-color.org>).

use super::problem::{DesignError, Problem};
use codespan_reporting::diagnostic::{Diagnostic, Label};
use codespan_reporting::files::SimpleFile;
use codespan_reporting::term::{self, Config, Styles, StylesWriter, termcolor};
use std::io::IsTerminal;
use std::ops::Range;

/// Renders every problem of `err` against `source`, the text `err` was produced from.
///
/// With `colour` the output carries ANSI colour codes; without, it is plain text. A problem
/// whose span does not fit `source` (a caller passing other text) is shown in the one-line
/// form `file:line:col: message [code]`, so nothing is ever dropped.
pub fn render(err: &DesignError, source: &str, colour: bool) -> String {
    let file = SimpleFile::new(err.file.as_str(), source);
    let config = Config::default();
    let styles = Styles::default();
    let mut out = String::new();
    for p in &err.problems {
        let diagnostic = to_diagnostic(p, source);
        let rendered = if colour {
            let mut buf = termcolor::Ansi::new(Vec::new());
            let mut writer = StylesWriter::new(&mut buf, &styles);
            term::emit_to_write_style(&mut writer, &config, &file, &diagnostic)
                .ok()
                .map(|()| String::from_utf8_lossy(&buf.into_inner()).into_owned())
        } else {
            let mut s = String::new();
            term::emit_to_string(&mut s, &config, &file, &diagnostic)
                .ok()
                .map(|()| s)
        };
        match rendered {
            Some(text) => out.push_str(&text),
            None => out.push_str(&format!("{}:{p}\n\n", err.file)),
        }
    }
    let n = err.problems.len();
    out.push_str(&format!(
        "{}: {n} problem{} in the design file\n",
        err.file,
        if n == 1 { "" } else { "s" }
    ));
    out
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

fn to_diagnostic(p: &Problem, source: &str) -> Diagnostic<()> {
    let span = fit_span(&p.span, source);
    let label_text = if p.key.is_empty() {
        String::new()
    } else {
        format!("`{}`", p.key)
    };
    let mut d = Diagnostic::error()
        .with_code(p.code)
        .with_message(&p.message)
        .with_label(Label::primary((), span).with_message(label_text));
    if let Some(h) = &p.help {
        d = d.with_note(format!("help: {h}"));
    }
    d
}

/// The span clamped to the text and moved to character boundaries; an empty span is widened
/// to the character it points at (so the caret has something to stand under).
fn fit_span(span: &Range<usize>, source: &str) -> Range<usize> {
    let len = source.len();
    let mut start = span.start.min(len);
    while !source.is_char_boundary(start) {
        start -= 1;
    }
    let mut end = span.end.clamp(start, len);
    while !source.is_char_boundary(end) {
        end += 1;
    }
    if end == start
        && let Some(c) = source[start..].chars().next()
        && c != '\n'
    {
        end = start + c.len_utf8();
    }
    start..end
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
    fn plain_rendering_has_location_caret_help_and_code() {
        let err = DesignError {
            file: "t.toml".into(),
            problems: vec![problem(22..25)],
        };
        let s = render(&err, TEXT, false);
        assert!(
            s.contains("error[missing-unit]: `tank.inner_radius = 550`"),
            "{s}"
        );
        assert!(s.contains("t.toml:2:16"), "{s}");
        assert!(s.contains("inner_radius = 550"), "{s}");
        assert!(s.contains("^^^"), "{s}");
        assert!(s.contains("help: write the number with a unit"), "{s}");
        assert!(s.ends_with("t.toml: 1 problem in the design file\n"), "{s}");
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
    fn spans_outside_the_text_or_inside_a_character_still_render() {
        let text = "a = \"\u{b5}\"\n";
        for span in [0..0, 5..6, 6..6, 100..200, 11..11] {
            let err = DesignError {
                file: "u.toml".into(),
                problems: vec![problem(span.clone())],
            };
            let s = render(&err, text, false);
            assert!(s.contains("missing-unit"), "{span:?}: {s}");
        }
    }
}
