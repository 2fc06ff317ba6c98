//! A problem located by its JSON path, and the nearest-name suggestion for unknown fields.

use std::fmt;

/// One problem in a scene, located by its JSON path such as
/// `arm.joints[2].servo.deadband_us`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Problem {
    /// JSON path of the field at fault (empty for the whole document).
    pub path: String,
    /// What is wrong, in words, in the file's units.
    pub message: String,
}

impl Problem {
    /// A problem at `path`.
    pub fn new(path: impl Into<String>, message: impl Into<String>) -> Problem {
        Problem {
            path: path.into(),
            message: message.into(),
        }
    }
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.path.is_empty() {
            write!(f, "{}", self.message)
        } else {
            write!(f, "{}: {}", self.path, self.message)
        }
    }
}

/// Joins a parent path and a key: `arm` + `joints` → `arm.joints`.
pub(crate) fn child(parent: &str, key: &str) -> String {
    if parent.is_empty() {
        key.to_string()
    } else {
        format!("{parent}.{key}")
    }
}

/// Joins a parent path and an index: `arm.joints` + 2 → `arm.joints[2]`.
pub(crate) fn item(parent: &str, index: usize) -> String {
    format!("{parent}[{index}]")
}

/// Levenshtein edit distance (insertions, deletions, substitutions, each costing 1), counted
/// in characters.
pub(crate) fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut diagonal = row[0];
        row[0] = i + 1;
        for (j, &cb) in b.iter().enumerate() {
            let above = row[j + 1];
            let cost = usize::from(ca != cb);
            row[j + 1] = (above + 1).min(row[j] + 1).min(diagonal + cost);
            diagonal = above;
        }
    }
    row[b.len()]
}

/// The known name nearest to `unknown`, if it is close enough to be a likely typo: at most
/// half the unknown name's length (and at least 3) edits away.
pub(crate) fn nearest<'a>(unknown: &str, known: &[&'a str]) -> Option<&'a str> {
    let limit = (unknown.chars().count() / 2).max(3);
    known
        .iter()
        .map(|name| (edit_distance(unknown, name), *name))
        .filter(|(distance, _)| *distance <= limit)
        .min_by_key(|(distance, _)| *distance)
        .map(|(_, name)| name)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn edit_distance_matches_textbook_examples() {
        // Classic examples of Levenshtein distance (Jurafsky & Martin, *Speech and Language
        // Processing*, 2nd ed., ch. 3 uses "intention"/"execution"; with unit substitution
        // cost the distance is 5). "kitten"/"sitting" = 3 is the common worked example.
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("intention", "execution"), 5);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("same", "same"), 0);
    }

    #[test]
    fn a_typo_suggests_the_field_meant() {
        let known = ["pulse_min_us", "no_load_speed_deg_per_s", "deadband_us"];
        assert_eq!(
            nearest("no_load_sped_deg_per_s", &known),
            Some("no_load_speed_deg_per_s")
        );
        assert_eq!(nearest("deadband_ms", &known), Some("deadband_us"));
        assert_eq!(nearest("colour", &known), None);
    }

    #[test]
    fn paths_join_like_json_paths() {
        assert_eq!(child("", "arm"), "arm");
        assert_eq!(item(&child("arm", "joints"), 2), "arm.joints[2]");
    }
}
