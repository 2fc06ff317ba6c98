//! The sequence: waypoints in order with name, move kind, profile, speed share, dwell, arrival
//! and gripper, and the dry run's marks (placement success at a pick or place, an unsettled
//! stop); store the current pose, insert, delete, reorder, rename, jump to.

use egui::{Button, ComboBox, DragValue, ScrollArea, TextEdit, Ui};

use crate::editor::command::{Command, WaypointField};
use crate::editor::dry_run_marks;
use crate::editor::state::EditorState;
use crate::scene::{Arrival, FileWords, GripperState, MoveKind, ProfileKind, Waypoint};

/// Height of one waypoint row, in points.
const ROW_HEIGHT: f32 = 24.0;

/// Draws the sequence panel. Only the rows in view are laid out, so long sequences stay cheap.
pub fn sequence(ui: &mut Ui, state: &EditorState) -> Command {
    let mut command = Command::None;
    let count = state.scene.waypoints.len();
    let selected = state.selected_waypoint.filter(|index| *index < count);
    ui.horizontal_wrapped(|ui| {
        ui.heading(format!(
            "Sequence ({})",
            super::counted(count, "waypoint", "waypoints")
        ));
        ui.separator();
        if ui
            .button("Store pose")
            .on_hover_text("store the current pose after the selected waypoint")
            .clicked()
        {
            command = Command::StoreWaypoint;
        }
        if ui
            .button("Insert before")
            .on_hover_text("store the current pose before the selected waypoint")
            .clicked()
        {
            command = Command::InsertWaypoint;
        }
        let has = selected.is_some();
        if ui.add_enabled(has, Button::new("Update pose")).clicked()
            && let Some(index) = selected
        {
            command = Command::UpdateWaypointPose(index);
        }
        if ui
            .add_enabled(has, Button::new("Duplicate"))
            .on_hover_text("store a copy of the selected waypoint right after it")
            .clicked()
            && let Some(index) = selected
        {
            command = Command::DuplicateWaypoint(index);
        }
        if ui.add_enabled(has, Button::new("Delete")).clicked()
            && let Some(index) = selected
        {
            command = Command::DeleteWaypoint(index);
        }
        if ui
            .add_enabled(selected.is_some_and(|i| i > 0), Button::new("Move up"))
            .clicked()
            && let Some(index) = selected
        {
            command = Command::MoveWaypoint {
                from: index,
                to: index - 1,
            };
        }
        if ui
            .add_enabled(
                selected.is_some_and(|i| i + 1 < count),
                Button::new("Move down"),
            )
            .clicked()
            && let Some(index) = selected
        {
            command = Command::MoveWaypoint {
                from: index,
                to: index + 1,
            };
        }
        ui.separator();
        if ui
            .add_enabled(count > 0, Button::new("New sequence"))
            .on_hover_text("remove every waypoint to teach a new task; the arm stays (undo)")
            .clicked()
        {
            command = Command::NewSequence;
        }
    });
    ui.separator();
    // The table scrolls sideways when the panel is narrower than its columns (a small window),
    // rather than running under the timeline beside it.
    ScrollArea::horizontal()
        .id_salt("sequence columns")
        .auto_shrink([false, false])
        .show(ui, |ui| {
            ui.horizontal(|ui| {
                for (title, width) in COLUMNS {
                    ui.add_sized(
                        [width, 16.0],
                        egui::Label::new(egui::RichText::new(title).strong()),
                    );
                }
            });
            ScrollArea::vertical()
                .id_salt("sequence rows")
                .auto_shrink([false, false])
                .show_rows(ui, ROW_HEIGHT, count, |ui, rows| {
                    for index in rows {
                        if let Some(waypoint) = state.scene.waypoints.get(index) {
                            let row =
                                waypoint_row(ui, state, index, waypoint, selected == Some(index));
                            if row != Command::None {
                                command = row;
                            }
                        }
                    }
                });
        });
    command
}

/// Column titles and widths, in points.
const COLUMNS: [(&str, f32); 9] = [
    ("#", 36.0),
    ("name", 130.0),
    ("move", 104.0),
    ("profile", 112.0),
    ("speed share", 84.0),
    ("dwell", 84.0),
    ("arrival", 112.0),
    ("gripper", 96.0),
    ("", 50.0),
];

fn waypoint_row(
    ui: &mut Ui,
    state: &EditorState,
    index: usize,
    waypoint: &Waypoint,
    selected: bool,
) -> Command {
    let mut command = Command::None;
    let edit = |field| Command::EditWaypoint { index, field };
    ui.horizontal(|ui| {
        ui.set_height(ROW_HEIGHT - 4.0);
        if ui
            .add_sized(
                [COLUMNS[0].1, 20.0],
                Button::selectable(selected, format!("{}", index + 1)),
            )
            .clicked()
        {
            command = Command::SelectWaypoint(index);
        }
        let mut name = waypoint.name.clone();
        let name_field = ui
            .add_sized(
                [COLUMNS[1].1, 20.0],
                TextEdit::singleline(&mut name).id_salt(("waypoint name", index)),
            )
            .accessible_name(format!("name of waypoint {}", index + 1));
        if name_field.changed() {
            command = edit(WaypointField::Name(name));
        } else if name_field.gained_focus() {
            command = Command::SelectWaypoint(index);
        }
        let mut move_kind = waypoint.move_kind;
        choose(
            ui,
            ("move", index),
            COLUMNS[2].1,
            &mut move_kind,
            &MoveKind::choices(),
        );
        if move_kind != waypoint.move_kind {
            command = edit(WaypointField::MoveKind(move_kind));
        }
        let mut profile = waypoint.profile;
        choose(
            ui,
            ("profile", index),
            COLUMNS[3].1,
            &mut profile,
            &ProfileKind::choices(),
        );
        if profile != waypoint.profile {
            command = edit(WaypointField::Profile(profile));
        }
        let mut speed = waypoint.speed_share_pct;
        ui.add_sized(
            [COLUMNS[4].1, 20.0],
            DragValue::new(&mut speed)
                .range(1.0..=100.0)
                .speed(0.5)
                .max_decimals(1)
                .suffix(" %"),
        );
        if speed != waypoint.speed_share_pct {
            command = edit(WaypointField::SpeedSharePct(speed));
        }
        let mut dwell = waypoint.dwell_ms;
        ui.add_sized(
            [COLUMNS[5].1, 20.0],
            DragValue::new(&mut dwell)
                .range(0.0..=600_000.0)
                .speed(5.0)
                .max_decimals(0)
                .suffix(" ms"),
        );
        if dwell != waypoint.dwell_ms {
            command = edit(WaypointField::DwellMs(dwell));
        }
        let mut arrival = waypoint.arrival;
        choose(
            ui,
            ("arrival", index),
            COLUMNS[6].1,
            &mut arrival,
            &Arrival::choices(),
        );
        if arrival != waypoint.arrival {
            command = edit(WaypointField::Arrival(arrival));
        }
        let mut gripper = waypoint.gripper;
        choose(
            ui,
            ("gripper", index),
            COLUMNS[7].1,
            &mut gripper,
            &GripperState::choices(),
        );
        if gripper != waypoint.gripper {
            command = edit(WaypointField::Gripper(gripper));
        }
        if ui
            .add_sized([COLUMNS[8].1, 20.0], Button::new("Go"))
            .on_hover_text("move the arm to this waypoint")
            .clicked()
        {
            command = Command::JumpToWaypoint(index);
        }
        dry_run_marks::sequence_marker(ui, &state.scene, state.dry_run_found(), index);
    });
    command
}

fn choose<T: Copy + PartialEq>(
    ui: &mut Ui,
    id: (&str, usize),
    width: f32,
    value: &mut T,
    options: &[(T, &str)],
) {
    let text = options
        .iter()
        .find(|(option, _)| option == value)
        .map_or("", |(_, text)| *text);
    ComboBox::from_id_salt(id)
        .width(width - 8.0)
        .selected_text(text)
        .show_ui(ui, |ui| {
            for (option, text) in options {
                ui.selectable_value(value, *option, *text);
            }
        })
        .response
        .accessible_name(format!("{} of waypoint {}", id.0, id.1 + 1));
}

#[cfg(test)]
mod tests {
    use egui_kittest::Harness;
    use egui_kittest::kittest::Queryable;

    use super::*;
    use crate::editor::sample::sample_scene;

    fn harness() -> Harness<'static, (EditorState, Vec<Command>)> {
        Harness::builder()
            .with_size([1000.0, 500.0])
            .build_ui_state(
                |ui, (state, commands): &mut (EditorState, Vec<Command>)| {
                    let command = sequence(ui, state);
                    if command != Command::None {
                        commands.push(command);
                    }
                },
                (EditorState::new(sample_scene(), None), Vec::new()),
            )
    }

    #[test]
    fn store_pose_asks_to_store_a_waypoint() {
        let mut harness = harness();
        harness.get_by_label("Store pose").click();
        harness.run();
        assert_eq!(harness.state().1, vec![Command::StoreWaypoint]);
    }

    #[test]
    fn go_jumps_to_that_waypoint() {
        let mut harness = harness();
        let go = harness
            .get_all_by_label("Go")
            .nth(2)
            .map(|node| node.rect().center());
        let Some(go) = go else {
            panic!("no third Go button");
        };
        harness.hover_at(go);
        harness.drag_at(go);
        harness.drop_at(go);
        harness.run();
        assert_eq!(harness.state().1, vec![Command::JumpToWaypoint(2)]);
    }

    #[test]
    fn move_down_moves_the_selected_waypoint() {
        let mut harness = harness();
        harness.get_by_label("Move down").click();
        harness.run();
        assert_eq!(
            harness.state().1,
            vec![Command::MoveWaypoint { from: 0, to: 1 }]
        );
    }
}
