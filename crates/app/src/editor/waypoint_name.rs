//! Names for a stored waypoint that say what changed from the one before it — "25 mm below pick",
//! "pick, gripper closed" — without stacking one description on another: a waypoint stored
//! above a "25 mm below pick" is named from "pick", not "25 mm above 25 mm below pick".

use crate::scene::GripperState;

/// A waypoint's name read as a description of a subject: how far above (negative: below) the
/// subject it is, in mm, and the gripper state when it differs from the subject's.
#[derive(Debug, Clone, PartialEq)]
struct Described<'a> {
    subject: &'a str,
    rise_mm: f64,
    gripper: Option<GripperState>,
}

/// Reads `name` as the names this module makes: `[back at |N mm above |N mm below ]SUBJECT[,
/// gripper open|closed]`, with any ` (copy)` or ` (N)` a duplicate or a taken name added at the end.
/// A name that is none of these is its own subject.
fn describe(name: &str) -> Described<'_> {
    let mut rest = name.trim();
    // The endings `unique_name` and Duplicate add.
    loop {
        let trimmed = rest.strip_suffix(" (copy)").or_else(|| {
            let open = rest.rfind(" (")?;
            let number = rest[open + 2..].strip_suffix(')')?;
            (!number.is_empty() && number.bytes().all(|b| b.is_ascii_digit()))
                .then(|| &rest[..open])
        });
        match trimmed {
            Some(shorter) if !shorter.is_empty() => rest = shorter,
            _ => break,
        }
    }
    let mut gripper = None;
    for (ending, state) in [
        (", gripper open", GripperState::Open),
        (", gripper closed", GripperState::Closed),
    ] {
        if let Some(shorter) = rest.strip_suffix(ending)
            && !shorter.is_empty()
        {
            rest = shorter;
            gripper = Some(state);
        }
    }
    if let Some(subject) = rest.strip_prefix("back at ")
        && !subject.is_empty()
    {
        rest = subject;
    }
    let mut rise_mm = 0.0;
    if let Some((number, after)) = rest.split_once(" mm ")
        && let Ok(distance) = number.parse::<f64>()
        && distance.is_finite()
    {
        for (word, sign) in [("above ", 1.0), ("below ", -1.0)] {
            if let Some(subject) = after.strip_prefix(word)
                && !subject.is_empty()
            {
                rise_mm = sign * distance;
                rest = subject;
            }
        }
    }
    Described {
        subject: rest,
        rise_mm,
        gripper,
    }
}

fn gripper_word(state: GripperState) -> &'static str {
    match state {
        GripperState::Open => "open",
        GripperState::Closed => "closed",
    }
}

fn other(state: GripperState) -> GripperState {
    match state {
        GripperState::Open => GripperState::Closed,
        GripperState::Closed => GripperState::Open,
    }
}

/// The name of a waypoint stored `rise_mm` straight above (negative: below) the one named
/// `previous` (whose gripper was `previous_gripper`), with the gripper now `gripper`.
///
/// The distance is from the subject the previous name describes, so a descent and the climb
/// back make "25 mm below pick" then "pick" again (said "back at pick" when nothing else
/// differs); the gripper is named when it differs from the subject's.
pub(crate) fn relative_name(
    previous: &str,
    previous_gripper: GripperState,
    rise_mm: f64,
    gripper: GripperState,
) -> String {
    let described = describe(previous);
    let subject_gripper = described.gripper.map_or(previous_gripper, other);
    let total_mm = described.rise_mm + rise_mm;
    let place = if total_mm.abs() >= 0.5 {
        let side = if total_mm > 0.0 { "above" } else { "below" };
        format!("{:.0} mm {side} {}", total_mm.abs(), described.subject)
    } else {
        described.subject.to_string()
    };
    if gripper != subject_gripper {
        format!("{place}, gripper {}", gripper_word(gripper))
    } else if total_mm.abs() >= 0.5 {
        place
    } else {
        format!("back at {place}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use GripperState::{Closed, Open};

    #[test]
    fn a_pick_reads_down_grip_up_without_stacking() {
        let down = relative_name("point 1", Open, -25.0, Open);
        assert_eq!(down, "25 mm below point 1");
        let grip = relative_name(&down, Open, 0.0, Closed);
        assert_eq!(grip, "25 mm below point 1, gripper closed");
        let up = relative_name(&grip, Closed, 25.0, Closed);
        assert_eq!(up, "point 1, gripper closed");
        let higher = relative_name(&up, Closed, 10.0, Closed);
        assert_eq!(higher, "10 mm above point 1, gripper closed");
        // Released again: the gripper is as the subject had it, so it is not named.
        let released = relative_name(&higher, Closed, 0.0, Open);
        assert_eq!(released, "10 mm above point 1");
    }

    #[test]
    fn down_and_up_again_is_back_at_the_subject() {
        let down = relative_name("above tray", Open, -12.0, Open);
        let back = relative_name(&down, Open, 12.0, Open);
        assert_eq!(back, "back at above tray");
        assert_eq!(
            relative_name(&back, Open, -3.0, Open),
            "3 mm below above tray"
        );
    }

    #[test]
    fn copies_and_taken_names_keep_their_subject() {
        assert_eq!(
            relative_name("25 mm below pick (copy) (2)", Open, 5.0, Open),
            "20 mm below pick"
        );
        assert_eq!(
            relative_name("pick (3)", Open, -4.0, Open),
            "4 mm below pick"
        );
        // A name that only looks like ours in part is its own subject.
        assert_eq!(
            relative_name("slot (a)", Open, 5.0, Open),
            "5 mm above slot (a)"
        );
        assert_eq!(
            relative_name("about 5 mm above", Open, -5.0, Open),
            "5 mm below about 5 mm above"
        );
    }
}
