//! Located problems in a design file, and the error that gathers all of them.
//!
//! Input: byte spans from the TOML parser and the file text. Output: [`Problem`] values with
//! 1-based line and column, a stable code, the key path and what is accepted, collected into
//! one [`DesignError`] so that the user sees every mistake in one run.

use std::fmt;
use std::ops::Range;

/// One thing wrong with a design file, pointing at the text that caused it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Problem {
    /// A stable code for the class of problem ("unknown-key", "missing-unit", "overlap", ...).
    pub code: &'static str,
    /// The key path, e.g. `conductor[2].corner_radius`; `[[table]]` entries count from 1 in the
    /// order they appear in the file.
    pub key: String,
    /// 1-based line of the offending text.
    pub line: usize,
    /// 1-based column (in characters) of the offending text.
    pub column: usize,
    /// Byte range of the offending text.
    pub span: Range<usize>,
    pub message: String,
    /// What to write instead, or what is accepted.
    pub help: Option<String>,
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "line {}, column {}: {} ({})",
            self.line, self.column, self.message, self.code
        )?;
        if let Some(h) = &self.help {
            write!(f, "\n  remedy: {h}")?;
        }
        Ok(())
    }
}

/// Every problem found in one design file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DesignError {
    pub file: String,
    /// Sorted by position in the file.
    pub problems: Vec<Problem>,
}

impl DesignError {
    /// The problems with a given code (for tests and for callers that handle one class).
    pub fn with_code(&self, code: &str) -> Vec<&Problem> {
        self.problems.iter().filter(|p| p.code == code).collect()
    }
}

impl fmt::Display for DesignError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for p in &self.problems {
            writeln!(f, "{}, {p}", self.file)?;
        }
        let n = self.problems.len();
        write!(
            f,
            "{}: {n} problem{} in the design file",
            self.file,
            if n == 1 { "" } else { "s" }
        )
    }
}

impl std::error::Error for DesignError {}

/// Maps byte offsets to 1-based line and column.
pub(crate) struct LineIndex<'a> {
    text: &'a str,
    starts: Vec<usize>,
}

impl<'a> LineIndex<'a> {
    pub(crate) fn new(text: &'a str) -> Self {
        let mut starts = vec![0];
        for (i, b) in text.bytes().enumerate() {
            if b == b'\n' {
                starts.push(i + 1);
            }
        }
        Self { text, starts }
    }

    /// 1-based (line, column) of byte offset `at` (clamped to the text).
    pub(crate) fn locate(&self, at: usize) -> (usize, usize) {
        let mut at = at.min(self.text.len());
        while !self.text.is_char_boundary(at) {
            at -= 1;
        }
        let line = match self.starts.binary_search(&at) {
            Ok(k) => k,
            Err(k) => k - 1,
        };
        let col = self.text[self.starts[line]..at].chars().count() + 1;
        (line + 1, col)
    }
}

/// Collects problems while a design is read; turns spans into lines once at the end.
#[derive(Debug, Default)]
pub(crate) struct Problems {
    /// Line and column are filled in by `into_error`.
    items: Vec<Problem>,
    /// Key paths suggested for misspelt keys: their "missing key" problems would only repeat
    /// the misspelling, so they are left out.
    suggested: Vec<String>,
}

impl Problems {
    pub(crate) fn push(
        &mut self,
        code: &'static str,
        key: impl Into<String>,
        span: Range<usize>,
        message: impl Into<String>,
        help: Option<String>,
    ) {
        self.items.push(Problem {
            code,
            key: key.into(),
            line: 0,
            column: 0,
            span,
            message: message.into(),
            help,
        });
    }

    /// Notes that `key` was suggested for a misspelt key.
    pub(crate) fn suggested(&mut self, key: String) {
        self.suggested.push(key);
    }

    pub(crate) fn is_empty(&self) -> bool {
        self.items.is_empty()
    }

    #[cfg(test)]
    pub(crate) fn len(&self) -> usize {
        self.items.len()
    }

    pub(crate) fn into_error(self, text: &str, file: &str) -> DesignError {
        let index = LineIndex::new(text);
        let suggested = self.suggested;
        let mut problems = self.items;
        problems.retain(|p| !(p.code == "missing-key" && suggested.contains(&p.key)));
        for p in &mut problems {
            (p.line, p.column) = index.locate(p.span.start);
        }
        problems.sort_by(|a, b| {
            (a.span.start, a.code, &a.message).cmp(&(b.span.start, b.code, &b.message))
        });
        problems.dedup();
        DesignError {
            file: file.to_string(),
            problems,
        }
    }
}

/// Levenshtein distance between two short strings (keys, names, units).
pub(crate) fn edit_distance(a: &str, b: &str) -> usize {
    let a: Vec<char> = a.chars().collect();
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    let mut cur = vec![0; b.len() + 1];
    for i in 1..=a.len() {
        cur[0] = i;
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            cur[j] = (prev[j] + 1).min(cur[j - 1] + 1).min(prev[j - 1] + cost);
        }
        std::mem::swap(&mut prev, &mut cur);
    }
    prev[b.len()]
}

/// The candidate nearest to `word`, when it is near enough to be a likely typo.
pub(crate) fn nearest<'c>(word: &str, candidates: &[&'c str]) -> Option<&'c str> {
    let lower = word.to_lowercase();
    candidates
        .iter()
        .map(|c| (edit_distance(&lower, &c.to_lowercase()), *c))
        .filter(|(d, c)| *d <= (c.chars().count() / 3).max(2))
        .min_by_key(|(d, _)| *d)
        .map(|(_, c)| c)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn edit_distance_counts_single_edits() {
        assert_eq!(edit_distance("radius", "radius"), 0);
        assert_eq!(edit_distance("raduis", "radius"), 2);
        assert_eq!(edit_distance("radis", "radius"), 1);
        assert_eq!(edit_distance("", "abc"), 3);
    }

    #[test]
    fn nearest_ignores_far_words() {
        let keys = ["radius", "center_z", "potential"];
        assert_eq!(nearest("raduis", &keys), Some("radius"));
        assert_eq!(nearest("potental", &keys), Some("potential"));
        assert_eq!(nearest("colour", &keys), None);
    }

    #[test]
    fn line_index_is_one_based_and_counts_characters() {
        let text = "a = 1\nµ = \"x\"\n";
        let idx = LineIndex::new(text);
        assert_eq!(idx.locate(0), (1, 1));
        assert_eq!(idx.locate(6), (2, 1));
        // 'µ' is two bytes; the '=' after it is in column 3.
        assert_eq!(idx.locate(9), (2, 3));
    }
}
