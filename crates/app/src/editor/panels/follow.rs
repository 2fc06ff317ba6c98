//! The follow panel: the caution, the Follow switches (the edited pose, the input arm) and
//! their speed share, what the device is doing, the jog steps and the keys that jog; and
//! [`jog_keys`], which reads those keys.

use egui::{Color32, DragValue, Key, Modifiers, RichText, Slider, Ui};

use crate::editor::command::Command;
use crate::editor::device::LinkView;
use crate::editor::estop::StopState;
use crate::editor::follow::{
    FOLLOW_SHARE_RANGE_PCT, FollowCommand, FollowPhase, FollowSource, JOG_WHILE_FOLLOWING_INPUTS,
    jog_refused,
};
use crate::editor::state::EditorState;

use super::link::caution_box;

/// The Follow switch's label.
pub const FOLLOW_LABEL: &str = "Follow the edited pose";

/// The switch that makes the device follow the input arm.
pub const FOLLOW_INPUT_LABEL: &str = "Follow the input arm";

/// The key that jogs the chosen joint back by one step.
pub const JOG_BACK_KEY: Key = Key::OpenBracket;

/// The key that jogs the chosen joint on by one step.
pub const JOG_ON_KEY: Key = Key::CloseBracket;

/// The keys that choose the joint to jog: 1 for the first joint, … 9.
const JOINT_KEYS: [Key; 9] = [
    Key::Num1,
    Key::Num2,
    Key::Num3,
    Key::Num4,
    Key::Num5,
    Key::Num6,
    Key::Num7,
    Key::Num8,
    Key::Num9,
];

/// The jog keys, as the panel lists them: (keys, what they do).
pub const JOG_KEYS: [(&str, &str); 4] = [
    ("1 … 9", "choose the joint to jog"),
    ("[  and  ]", "jog that joint back / on by the joint step"),
    (
        "Left/Right, Down/Up, Page Down/Up",
        "jog the tool point along x, y, z by the tool step (× 10 with Shift)",
    ),
    ("Esc", "emergency stop: follow turns off"),
];

/// Draws the follow panel.
pub fn follow(ui: &mut Ui, state: &EditorState, view: &LinkView) -> Command {
    let mut command = Command::None;
    let settings = &state.follow;
    ui.heading("Follow");
    ui.label(
        "The connected device follows the edited pose: dragging the tool point, the joint \
         sliders, Go on a waypoint, the timeline's cursor and the jog keys all move the arm, \
         no faster than the speed share below and never faster than its servos can follow. \
         Or it follows the input arm (amber in the views), moved by hand.",
    );
    if !state.device.caution_acknowledged
        && caution_box(
            ui,
            "A servo that is limp runs to its first pulse at its own top speed when \
                     follow starts.",
        )
    {
        command = Command::AcknowledgeCaution;
    }
    let connected = view.connection.is_some();
    let stopped = matches!(state.stop, StopState::Latched { .. });
    let may_switch = state.device.caution_acknowledged && connected && !stopped;
    let following = |source| settings.on && settings.source == source;
    let mut on = following(FollowSource::EditedPose);
    let switch = ui.add_enabled(may_switch || on, egui::Checkbox::new(&mut on, FOLLOW_LABEL));
    if switch.changed() {
        command = Command::Follow(FollowCommand::Switch(on));
    }
    let mut on = following(FollowSource::InputArm);
    let has_input_arm = state.device.input_pose.is_some();
    let switch = ui
        .add_enabled(
            (may_switch && has_input_arm) || on,
            egui::Checkbox::new(&mut on, FOLLOW_INPUT_LABEL),
        )
        .on_disabled_hover_text(
            "needs the caution acknowledged, a device that sends analog readings and the \
             scene's \"inputs\" mapped to joints (Arm tab, \"Input arm\")",
        );
    if switch.changed() {
        command = Command::Follow(FollowCommand::InputArm(on));
    }
    let what = if view.follow.inputs {
        "the input arm"
    } else {
        "the edited pose"
    };
    let status = match (view.follow.phase, connected, stopped) {
        (_, _, true) => "the emergency stop is latched: reset it before following".to_owned(),
        (_, false, _) => "no device is connected (see the Link tab)".to_owned(),
        (FollowPhase::Leaving, ..) if view.follow.readings_lost => {
            "the input arm's readings stopped: the arm comes to rest and the device holds it"
                .to_owned()
        }
        (FollowPhase::Following, ..) => format!(
            "the device follows {what} at {:.0} % of the joints' limits",
            view.follow.share * 100.0
        ),
        (FollowPhase::Leaving, ..) => "coming to rest; the device then holds".to_owned(),
        (FollowPhase::Off, ..) if settings.on => "starting…".to_owned(),
        (FollowPhase::Off, ..) => "off: the device holds what it was last sent".to_owned(),
    };
    ui.label(status);
    let (low, high) = FOLLOW_SHARE_RANGE_PCT;
    let mut share = settings.share_pct;
    let slider = ui.add(
        Slider::new(&mut share, low..=high)
            .suffix(" %")
            .text("speed share")
            .max_decimals(0),
    );
    if slider.changed() {
        command = Command::Follow(FollowCommand::SharePct(share));
    }
    ui.separator();
    ui.heading("Jog");
    let joint = settings.jog_joint;
    egui::Grid::new("jog settings")
        .num_columns(2)
        .spacing([8.0, 4.0])
        .show(ui, |ui| {
            ui.label("joint");
            egui::ComboBox::from_id_salt("jog joint")
                .selected_text(state.joint_label(joint))
                .show_ui(ui, |ui| {
                    for index in 0..state.joint_count() {
                        if ui
                            .selectable_label(index == joint, state.joint_label(index))
                            .clicked()
                        {
                            command = Command::Follow(FollowCommand::JogJoint(index));
                        }
                    }
                })
                .response
                .accessible_name("joint to jog");
            ui.end_row();
            ui.label("joint step");
            let unit = if state.is_prismatic(joint) {
                " mm"
            } else {
                "°"
            };
            let mut step = settings.joint_step;
            if ui
                .add(
                    DragValue::new(&mut step)
                        .speed(0.1)
                        .range(0.01..=90.0)
                        .suffix(unit),
                )
                .changed()
            {
                command = Command::Follow(FollowCommand::JointStep(step));
            }
            ui.end_row();
            ui.label("tool step");
            let mut step = settings.tool_step_mm;
            if ui
                .add(
                    DragValue::new(&mut step)
                        .speed(0.1)
                        .range(0.01..=100.0)
                        .suffix(" mm"),
                )
                .changed()
            {
                command = Command::Follow(FollowCommand::ToolStepMm(step));
            }
            ui.end_row();
        });
    let refused = jog_refused(&state.follow);
    if refused {
        ui.colored_label(Color32::from_rgb(230, 159, 0), JOG_WHILE_FOLLOWING_INPUTS);
    }
    ui.horizontal(|ui| {
        for (label, steps) in [("Jog back", -1.0), ("Jog on", 1.0)] {
            if ui
                .add_enabled(!refused, egui::Button::new(label))
                .on_disabled_hover_text(JOG_WHILE_FOLLOWING_INPUTS)
                .clicked()
            {
                command = Command::Follow(FollowCommand::Jog(steps));
            }
        }
    });
    ui.label(RichText::new("Keys (no field focused)").strong());
    // Wrapped lines, not a grid: the list must not widen the tools panel.
    for (keys, what) in JOG_KEYS {
        ui.horizontal_wrapped(|ui| {
            ui.monospace(keys);
            ui.label(what);
        });
    }
    ui.label(
        "While following, \"Store pose\" stores the pose the arm is being sent. Turning follow \
         off brings the arm to rest and the device holds it. Following the input arm, the device \
         holds when no readings come for half a second.",
    );
    command
}

/// The joint-jog keys pressed this frame, as commands: a number key chooses the joint, `[`
/// and `]` jog it. Nothing while a dialog is open or a widget has the keyboard.
pub fn jog_keys(ctx: &egui::Context, state: &EditorState) -> Vec<Command> {
    let free = ctx.memory(|memory| memory.focused().is_none());
    if state.view.dialog.is_some() || ctx.egui_wants_keyboard_input() || !free {
        return Vec::new();
    }
    let mut commands = Vec::new();
    ctx.input_mut(|input| {
        for (index, key) in JOINT_KEYS.into_iter().enumerate() {
            if index < state.joint_count() && input.consume_key(Modifiers::NONE, key) {
                commands.push(Command::Follow(FollowCommand::JogJoint(index)));
            }
        }
        let back = input.count_and_consume_key(Modifiers::NONE, JOG_BACK_KEY) as f64;
        let on = input.count_and_consume_key(Modifiers::NONE, JOG_ON_KEY) as f64;
        if on != back {
            commands.push(Command::Follow(FollowCommand::Jog(on - back)));
        }
    });
    commands
}

#[cfg(test)]
mod tests {
    use egui_kittest::Harness;
    use egui_kittest::kittest::Queryable;

    use super::*;
    use crate::editor::ACKNOWLEDGE_LABEL;
    use crate::editor::sample_scene;

    #[test]
    fn the_caution_shows_until_acknowledged_and_the_switch_waits_for_a_device() {
        let state = EditorState::new(sample_scene(), None);
        let mut harness = Harness::new_ui_state(
            |ui, state: &mut (EditorState, Command)| {
                let command = follow(ui, &state.0, &LinkView::default());
                if command != Command::None {
                    state.1 = command;
                }
            },
            (state, Command::None),
        );
        harness.run();
        harness.get_by_label(ACKNOWLEDGE_LABEL).click();
        harness.run();
        assert_eq!(harness.state().1, Command::AcknowledgeCaution);
        assert!(
            harness
                .query_by_label_contains("no device is connected")
                .is_some()
        );
        for (keys, _) in JOG_KEYS {
            assert!(harness.query_by_label(keys).is_some(), "{keys} listed");
        }
    }
}
