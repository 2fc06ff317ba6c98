//! `armwright format`: the scene file's Markdown reference or its JSON Schema, both printed from
//! the field table (`scene::reference_markdown`, `scene::schema_json`).

use super::Outcome;
use crate::scene::{reference_markdown, schema_json};

/// Prints the reference (`reference` true) or the schema to standard output.
pub(crate) fn run(reference: bool) -> Outcome {
    if reference {
        print!("{}", reference_markdown());
    } else {
        print!("{}", schema_json());
    }
    Outcome::Done
}
