//! The design file: parse, validate, expand generators into a `model::Model`.
//!
//! Input: the text of a TOML design file (DESIGN §3). Output: the validated `Model` in SI
//! units, or a [`DesignError`] listing every problem with its key path, line, column and what
//! is accepted. Two stages, as the file is read:
//!
//! 1. `schema`: serde structs that mirror the file exactly, every value with its span; unknown
//!    keys are reported with the nearest valid key.
//! 2. `validate`: units to SI (`units`), names and references resolved, `[[column]]`
//!    generators expanded (`generators`), values and geometry checked (`shapes`, `checks`),
//!    permittivities from the built-in table (`crate::materials`).
//!
//! [`expansion_listing`] shows what was modelled, one row per primitive.

mod checks;
mod column_grading;
pub mod diagnostic;
mod drawn;
mod gas;
mod generators;
mod listing;
mod parse;
mod potential;
mod problem;
mod read;
mod resolve;
mod samples;
mod schema;
mod sections;
mod shapes;
mod validate;

pub use gas::GASES;
pub use listing::{ListingKind, ListingRow, expansion_listing, potential_words};
pub use problem::{DesignError, Problem};
pub use sections::{OVERRIDES, OverrideKind};
pub use shapes::describe as describe_shape;

use crate::model::Model;
use std::path::{Path, PathBuf};

/// Why a design file could not be loaded.
#[derive(Debug, thiserror::Error)]
pub enum LoadError {
    #[error("cannot read design file {}: {source}", path.display())]
    Io {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
    #[error("{0}")]
    Design(#[from] DesignError),
}

/// Parses and validates a design file's text. `file_name` is used in messages, and its folder
/// is the one the drawings a design names (`shape = "outline"`) are read from.
pub fn from_str(text: &str, file_name: &str) -> Result<Model, DesignError> {
    let mut problems = problem::Problems::default();
    let model = parse::read(text, &mut problems)
        .and_then(|raw| validate::validate(&raw, text, file_name, &mut problems));
    match model {
        Some(m) if problems.is_empty() => Ok(m),
        _ => {
            if problems.is_empty() {
                // Every path that gives up reports why; this keeps the error non-empty if one
                // ever does not.
                problems.push(
                    "incomplete",
                    String::new(),
                    0..0,
                    "the design could not be completed",
                    None,
                );
            }
            Err(problems.into_error(text, file_name))
        }
    }
}

/// Reads, parses and validates a design file; returns the model and the file's text (for the
/// report's input echo and its checksum).
pub fn load(path: &Path) -> Result<(Model, String), LoadError> {
    let text = std::fs::read_to_string(path).map_err(|source| LoadError::Io {
        path: path.to_path_buf(),
        source,
    })?;
    let model = from_str(&text, &path.display().to_string())?;
    Ok((model, text))
}
