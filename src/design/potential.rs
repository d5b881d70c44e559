//! The `potential` key of a conductor: "ground", "terminal", "0.4 terminal", "300 kV",
//! "grading:12", "grading:LE:12", "stage:3".
//!
//! Input: the string as written. Output: a [`PotentialText`] whose references (columns,
//! stages) are resolved by `validate` once the columns and the multiplier are known.

use crate::units::{self, Dimension};

/// A potential as written, references not yet resolved.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum PotentialText {
    Ground,
    Terminal(f64),
    Absolute(f64),
    /// Node of a column's grading network; `column` None = the first column.
    Grading {
        column: Option<String>,
        node: usize,
    },
    Stage(usize),
}

/// What the key accepts, for messages.
pub(crate) const ACCEPTED: &str = "\"ground\", \"terminal\", a fraction of it (\"0.4 terminal\"), \
a voltage (\"300 kV\"), a grading node (\"grading:12\" or \"grading:COLUMN:12\") or a multiplier \
stage (\"stage:3\")";

/// Why a potential could not be read: a message and a help text.
pub(crate) type Failure = (String, String);

/// `text` without `prefix`, compared without regard to ASCII case.
fn strip_prefix_ci<'a>(text: &'a str, prefix: &str) -> Option<&'a str> {
    let head = text.get(..prefix.len())?;
    head.eq_ignore_ascii_case(prefix)
        .then(|| &text[prefix.len()..])
}

/// `text` without `suffix`, compared without regard to ASCII case.
fn strip_suffix_ci<'a>(text: &'a str, suffix: &str) -> Option<&'a str> {
    let cut = text.len().checked_sub(suffix.len())?;
    let tail = text.get(cut..)?;
    tail.eq_ignore_ascii_case(suffix).then(|| &text[..cut])
}

/// Parses a potential string.
pub(crate) fn parse(text: &str) -> Result<PotentialText, Failure> {
    let t = text.trim();
    if t.eq_ignore_ascii_case("ground") {
        return Ok(PotentialText::Ground);
    }
    if t.eq_ignore_ascii_case("terminal") {
        return Ok(PotentialText::Terminal(1.0));
    }
    if let Some(rest) = strip_prefix_ci(t, "grading:") {
        let (column, node_text) = match rest.rsplit_once(':') {
            Some((c, n)) => (Some(c.trim().to_string()), n.trim()),
            None => (None, rest.trim()),
        };
        let node = node_text.parse::<usize>().map_err(|_| {
            (
                format!("\"{t}\": the grading node must be a whole number, found \"{node_text}\""),
                "write \"grading:12\" (node 12 of the first column) or \"grading:COLUMN:12\""
                    .to_string(),
            )
        })?;
        if column.as_deref().is_some_and(str::is_empty) {
            return Err((
                format!("\"{t}\": the column name is empty"),
                "write \"grading:COLUMN:12\" with the column's name".to_string(),
            ));
        }
        return Ok(PotentialText::Grading { column, node });
    }
    if let Some(rest) = strip_prefix_ci(t, "stage:") {
        let stage = rest.trim().parse::<usize>().map_err(|_| {
            (
                format!("\"{t}\": the stage must be a whole number"),
                "write \"stage:3\" for the third stage node of the multiplier".to_string(),
            )
        })?;
        return Ok(PotentialText::Stage(stage));
    }
    if let Some(frac) = strip_suffix_ci(t, "terminal") {
        let frac = frac.trim().trim_end_matches('*').trim();
        return match units::parse_quantity(frac) {
            Ok((f, Dimension::Ratio)) => Ok(PotentialText::Terminal(f)),
            _ => match frac.parse::<f64>() {
                Ok(f) if f.is_finite() => Ok(PotentialText::Terminal(f)),
                _ => Err((
                    format!("\"{t}\": \"{frac}\" is not a fraction"),
                    "write a fraction before \"terminal\", e.g. \"0.4 terminal\" or \"40 % terminal\""
                        .to_string(),
                )),
            },
        };
    }
    match units::parse(t, Dimension::Voltage) {
        Ok(v) => Ok(PotentialText::Absolute(v)),
        Err(e) => Err((
            format!("\"{t}\" is not a potential ({e})"),
            format!("accepted: {ACCEPTED}"),
        )),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn reads_every_form() {
        assert_eq!(parse("ground"), Ok(PotentialText::Ground));
        assert_eq!(parse("terminal"), Ok(PotentialText::Terminal(1.0)));
        assert_eq!(parse("0.4 terminal"), Ok(PotentialText::Terminal(0.4)));
        assert_eq!(parse("40 % terminal"), Ok(PotentialText::Terminal(0.4)));
        assert_eq!(parse("300 kV"), Ok(PotentialText::Absolute(300e3)));
        assert_eq!(parse("-3 kV"), Ok(PotentialText::Absolute(-3e3)));
        assert_eq!(
            parse("grading:12"),
            Ok(PotentialText::Grading {
                column: None,
                node: 12
            })
        );
        assert_eq!(
            parse("grading:LE:12"),
            Ok(PotentialText::Grading {
                column: Some("LE".into()),
                node: 12
            })
        );
        assert_eq!(parse("stage:3"), Ok(PotentialText::Stage(3)));
    }

    #[test]
    fn rejects_nonsense_with_help() {
        assert!(parse("grading:x").is_err());
        assert!(parse("stage:").is_err());
        assert!(parse("half terminal").is_err());
        // Text that is not ASCII never splits a character.
        assert!(parse("grad\u{130}ng:3").is_err());
        assert!(parse("\u{212a}terminal").is_err());
        assert_eq!(
            parse("GRADING:2"),
            Ok(PotentialText::Grading {
                column: None,
                node: 2
            })
        );
        let (msg, help) = parse("300").unwrap_err();
        assert!(msg.contains("300"));
        assert!(help.contains("ground"));
    }
}
