//! The retime tab: the target (largest overshoot in mm, torque share in % of stall), the current
//! timing's figures against it (from the timeline's dry run, with its worst placement success),
//! a run on a worker thread with its progress and a cancel button, and the result: before and
//! after cycle time, worst overshoot, worst torque use (% of the derated stall torque), gripper
//! stops unsettled, what binds, the worst placement success, per waypoint, shaping; apply (one
//! undo step) or discard.

use egui::{Button, Color32, DragValue, Grid, ProgressBar, RichText, Ui};

use armwright_trajectory::Binding;

use crate::editor::command::Command;
use crate::editor::dry_run_marks;
use crate::editor::retime_job::{RetimeReport, RetimeRun, RunFigures};
use crate::editor::state::EditorState;
use crate::scene::Shaping;

/// Colour of a warning or a refusal.
const WARNING: Color32 = Color32::from_rgb(255, 140, 60);

/// Colour of "target met".
const MET: Color32 = Color32::from_rgb(120, 220, 120);

/// Draws the retime tab.
pub fn retime(ui: &mut Ui, state: &EditorState) -> Command {
    let mut command = Command::None;
    let form = &state.retime;
    let running = form.run.is_running();
    ui.heading("Retiming");
    ui.label(
        "The fastest speed shares and dwells whose dry run keeps every stop's overshoot and every \
         servo's simulated torque use within the target, and settles every stop where the \
         gripper acts before it acts. A timing that already meets the target is never made slower.",
    );
    ui.add_space(4.0);
    Grid::new("retime target")
        .num_columns(2)
        .spacing([12.0, 6.0])
        .show(ui, |ui| {
            ui.label("target overshoot");
            let mut overshoot = form.max_overshoot_mm;
            ui.add_enabled(
                !running,
                DragValue::new(&mut overshoot)
                    .range(0.01..=100.0)
                    .speed(0.01)
                    .max_decimals(2)
                    .suffix(" mm"),
            )
            .accessible_name("target overshoot (mm)");
            if overshoot != form.max_overshoot_mm {
                command = Command::SetRetimeOvershoot(overshoot);
            }
            ui.end_row();
            ui.label("torque share");
            let mut share = form.torque_share_pct;
            ui.add_enabled(
                !running,
                DragValue::new(&mut share)
                    .range(1.0..=100.0)
                    .speed(0.5)
                    .max_decimals(1)
                    .suffix(" % of stall"),
            )
            .accessible_name("torque share (% of stall torque)");
            if share != form.torque_share_pct {
                command = Command::SetRetimeTorqueShare(share);
            }
            ui.end_row();
        });
    ui.add_space(4.0);
    current_view(ui, state);
    ui.add_space(4.0);
    match &form.run {
        RetimeRun::Running {
            progress,
            cancelling,
            ..
        } => {
            let text = if *cancelling {
                format!("cancelling… ({:.0} % done)", progress * 100.0)
            } else {
                format!("retiming… {:.0} %", progress * 100.0)
            };
            ui.add(ProgressBar::new(*progress as f32).text(text));
            if ui.add_enabled(!cancelling, Button::new("Cancel")).clicked() {
                command = Command::CancelRetime;
            }
            if form.is_stale(&state.scene) {
                ui.colored_label(
                    WARNING,
                    "the scene changed since this retime started: its result will be stale",
                );
            }
        }
        run => {
            if ui
                .button("Run retime")
                .on_hover_text("retime the sequence on a worker thread; the editor stays usable")
                .clicked()
            {
                command = Command::StartRetime;
            }
            match run {
                RetimeRun::Cancelled => {
                    ui.label("retiming cancelled; the scene is unchanged");
                }
                RetimeRun::Failed { reason } => {
                    ui.colored_label(WARNING, reason);
                }
                RetimeRun::Finished(report) => {
                    ui.separator();
                    let stale = form.is_stale(&state.scene);
                    let result = report_view(ui, report, stale);
                    if result != Command::None {
                        command = result;
                    }
                }
                RetimeRun::Idle | RetimeRun::Running { .. } => {}
            }
        }
    }
    command
}

/// The scene's current timing against the target, from the timeline's newest dry run (made
/// with the scene's own torque derating, rescaled to the target's share).
fn current_view(ui: &mut Ui, state: &EditorState) {
    let form = &state.retime;
    let Some(timeline) = state.playback.timeline.as_ref() else {
        ui.label("current timing: waiting for the dry run");
        return;
    };
    let mut figures = RunFigures::of(&timeline.run);
    if form.torque_share_pct > 0.0 {
        figures.worst_torque_use_pct *=
            state.scene.timing.torque_derating_pct / form.torque_share_pct;
    }
    let verdict = if figures.meets(form.max_overshoot_mm) {
        "meets the target".to_string()
    } else {
        let mut misses = Vec::new();
        if figures.worst_overshoot_mm > form.max_overshoot_mm {
            misses.push("overshoot");
        }
        if figures.worst_torque_use_pct > 100.0 {
            misses.push("torque use");
        }
        if figures.unsettled_gripper_stops > 0 {
            misses.push("settling before the gripper acts");
        }
        format!("misses the target: {}", misses.join(", "))
    };
    ui.label(format!(
        "current timing: cycle {:.3} s, worst overshoot {:.2} mm, worst torque use {:.0} % of the derated stall torque, {} unsettled — {verdict}",
        figures.cycle_time_s,
        figures.worst_overshoot_mm,
        figures.worst_torque_use_pct,
        super::counted(figures.unsettled_gripper_stops, "gripper stop", "gripper stops")
    ));
    // From the same dry run, once its marks are of the scene as it is now.
    if let Some((index, placement)) = state.dry_run_found().and_then(|f| f.worst_placement()) {
        let text = format!(
            "current worst placement success: {:.0} % within {} mm, at waypoint {} \"{}\"",
            placement.estimate.success * 100.0,
            placement.tolerance_mm,
            index + 1,
            state
                .scene
                .waypoints
                .get(index)
                .map_or("", |w| w.name.as_str())
        );
        if placement.estimate.success < dry_run_marks::PLACEMENT_WARNING {
            ui.colored_label(WARNING, text)
        } else {
            ui.label(text)
        }
        .on_hover_text(dry_run_marks::placement_sentence(
            &state.scene,
            index,
            placement,
        ));
    }
}

/// A binding constraint in a word or two.
fn binding_word(binding: Binding) -> &'static str {
    match binding {
        Binding::SpeedLimit => "speed",
        Binding::Overshoot => "overshoot",
        Binding::TorqueUse => "torque",
        Binding::GripperSettling => "settling",
    }
}

/// The result of a retime that met its target, with Apply (unless stale) and Discard.
fn report_view(ui: &mut Ui, report: &RetimeReport, stale: bool) -> Command {
    let mut command = Command::None;
    let kept = report.already_met && report.after.cycle_time_s >= report.before.cycle_time_s;
    let headline = if report.after.unsettled_gripper_stops > 0 {
        None
    } else if kept {
        Some(format!(
            "already meets the target: the current timing is kept ({:.3} s); nothing faster meets it",
            report.before.cycle_time_s
        ))
    } else if report.already_met {
        Some(format!(
            "already meets the target; a faster timing does too: {:.3} s, was {:.3} s",
            report.after.cycle_time_s, report.before.cycle_time_s
        ))
    } else {
        Some(format!(
            "target met: worst overshoot {:.2} mm (at most {:.2} mm), worst torque use {:.0} % of the derated stall torque ({:.0} % of stall), every gripper stop settled",
            report.after.worst_overshoot_mm,
            report.max_overshoot_mm,
            report.after.worst_torque_use_pct,
            report.torque_share_pct
        ))
    };
    match headline {
        Some(text) => ui.colored_label(MET, text),
        None => ui.colored_label(
            WARNING,
            format!(
                "target not met: {} unsettled",
                super::counted(
                    report.after.unsettled_gripper_stops,
                    "gripper stop",
                    "gripper stops"
                )
            ),
        ),
    };
    ui.label(match report.binding {
        Some((binding, stops)) => format!(
            "binding: {} at {}",
            binding.words(),
            super::counted(stops, "stop", "stops")
        ),
        None => "binding: no constraint is near its limit".to_string(),
    });
    if let Some((index, success, tolerance_mm)) = report.worst_placement {
        let name = report.waypoints.get(index).map_or("", |w| w.name.as_str());
        ui.label(format!(
            "worst placement success: {:.0} % within {tolerance_mm} mm, at waypoint {} \"{name}\"",
            success * 100.0,
            index + 1
        ));
    }
    Grid::new("retime before after")
        .num_columns(3)
        .striped(true)
        .spacing([16.0, 4.0])
        .show(ui, |ui| {
            ui.label("");
            ui.label(RichText::new("before").strong());
            ui.label(RichText::new("after").strong());
            ui.end_row();
            let rows = [
                (
                    "cycle time",
                    report.before.cycle_time_s,
                    report.after.cycle_time_s,
                    "s",
                    3,
                ),
                (
                    "worst overshoot",
                    report.before.worst_overshoot_mm,
                    report.after.worst_overshoot_mm,
                    "mm",
                    2,
                ),
                (
                    "worst torque use",
                    report.before.worst_torque_use_pct,
                    report.after.worst_torque_use_pct,
                    "% of derated stall",
                    0,
                ),
                (
                    "gripper stops unsettled",
                    report.before.unsettled_gripper_stops as f64,
                    report.after.unsettled_gripper_stops as f64,
                    "",
                    0,
                ),
            ];
            for (name, before, after, unit, decimals) in rows {
                ui.label(name);
                ui.label(format!("{before:.decimals$} {unit}"));
                ui.label(format!("{after:.decimals$} {unit}"));
                ui.end_row();
            }
        });
    ui.label(match report.shaping {
        Shaping::None => "shaping: none (the scene's timing.shaping is off)".to_string(),
        shaping => format!(
            "shaping: {}, {} from stop to stop shaped",
            match shaping {
                Shaping::Zvd => "ZVD",
                _ => "ZV",
            },
            super::counted(report.shaped_runs, "run", "runs")
        ),
    });
    ui.add_space(4.0);
    if stale {
        ui.colored_label(
            WARNING,
            "STALE: the scene changed after this retime; it cannot be applied. Retime again.",
        );
    }
    ui.horizontal(|ui| {
        if ui
            .add_enabled(!stale, Button::new("Apply"))
            .on_hover_text("put the retimed speed shares and dwells into the scene (one undo step)")
            .clicked()
        {
            command = Command::ApplyRetime;
        }
        if ui.button("Discard").clicked() {
            command = Command::DiscardRetime;
        }
    });
    egui::CollapsingHeader::new("per waypoint (before / after)")
        .default_open(true)
        .show(ui, |ui| {
            egui::ScrollArea::horizontal()
                .id_salt("retime waypoints")
                .show(ui, |ui| waypoint_table(ui, report));
        });
    command
}

/// Column titles and widths of the per-waypoint table, in points.
const COLUMNS: [(&str, f32); 7] = [
    ("#", 20.0),
    ("waypoint", 84.0),
    ("speed %", 58.0),
    ("dwell ms", 62.0),
    ("overshoot mm", 88.0),
    ("torque %", 58.0),
    ("binds", 70.0),
];

/// Space between the table's columns, in points.
const COLUMN_GAP: f32 = 4.0;

/// Height of one row of the per-waypoint table, in points.
const ROW_HEIGHT: f32 = 18.0;

/// Before and after per waypoint: speed share, dwell, overshoot (stops only), torque use (% of
/// the derated stall torque), and what binds the stop after retiming. Only
/// the rows in view are laid out, so a long sequence stays cheap to draw.
fn waypoint_table(ui: &mut Ui, report: &RetimeReport) {
    let cell = |ui: &mut Ui, width: f32, text: RichText| {
        ui.add_sized([width, ROW_HEIGHT - 2.0], egui::Label::new(text).truncate());
    };
    ui.spacing_mut().item_spacing.x = COLUMN_GAP;
    ui.horizontal(|ui| {
        for (title, width) in COLUMNS {
            cell(ui, width, RichText::new(title).strong());
        }
    });
    egui::ScrollArea::vertical()
        .id_salt("retime waypoint rows")
        .max_height(320.0)
        .auto_shrink([true, true])
        .show_rows(ui, ROW_HEIGHT, report.waypoints.len(), |ui, rows| {
            for index in rows {
                let Some(waypoint) = report.waypoints.get(index) else {
                    continue;
                };
                let change = |[before, after]: [f64; 2], decimals: usize| {
                    RichText::new(format!("{before:.decimals$} / {after:.decimals$}"))
                };
                ui.horizontal(|ui| {
                    cell(ui, COLUMNS[0].1, RichText::new(format!("{}", index + 1)));
                    cell(ui, COLUMNS[1].1, RichText::new(&waypoint.name));
                    cell(ui, COLUMNS[2].1, change(waypoint.speed_share_pct, 0));
                    if waypoint.stop {
                        cell(ui, COLUMNS[3].1, change(waypoint.dwell_ms, 0));
                        cell(ui, COLUMNS[4].1, change(waypoint.overshoot_mm, 2));
                    } else {
                        cell(ui, COLUMNS[3].1, RichText::new("pass"));
                        cell(ui, COLUMNS[4].1, RichText::new("—"));
                    }
                    cell(ui, COLUMNS[5].1, change(waypoint.torque_use_pct, 0));
                    let binds = match (waypoint.gripper_acts, waypoint.settled[1], waypoint.binding)
                    {
                        (true, false, _) => RichText::new("UNSETTLED").color(WARNING),
                        (_, _, Some(binding)) => RichText::new(binding_word(binding)),
                        _ => RichText::new(""),
                    };
                    cell(ui, COLUMNS[6].1, binds);
                });
            }
        });
}
