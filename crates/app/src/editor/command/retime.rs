//! The retime tab's commands: the target, starting and cancelling a run on the worker, and
//! applying (one undo step) or discarding its result.

use super::Outside;
use super::history::edit;
use crate::editor::retime_job::RetimeRun;
use crate::editor::state::{EditorState, Level};
use crate::scene::validate;

/// Sets the largest allowed overshoot (mm, above 0).
pub(super) fn set_overshoot(state: &mut EditorState, mm: f64) {
    if mm.is_finite() && mm > 0.0 {
        state.retime.max_overshoot_mm = mm;
    }
}

/// Sets the torque share a retimed plan may use (%, above 0, at most 100).
pub(super) fn set_torque_share(state: &mut EditorState, pct: f64) {
    if pct.is_finite() && pct > 0.0 && pct <= 100.0 {
        state.retime.torque_share_pct = pct;
    }
}

/// Starts a retime of the scene as it is, when it is valid and nothing is running.
pub(super) fn start(state: &mut EditorState, outside: &mut Vec<Outside>) {
    if state.retime.run.is_running() {
        return;
    }
    let refusal = if state.arm.is_none() {
        Some("cannot retime: the arm cannot be built".to_string())
    } else if state.scene.waypoints.len() < 2 {
        Some("cannot retime: the sequence needs at least two waypoints".to_string())
    } else {
        let problems = validate(&state.scene);
        problems.first().map(|first| match problems.len() {
            1 => format!("cannot retime: the scene has a problem at {first}"),
            count => format!("cannot retime: the scene has {count} problems, the first at {first}"),
        })
    };
    if let Some(reason) = refusal {
        state.retime.run = RetimeRun::Failed { reason };
        return;
    }
    state.retime.run = RetimeRun::Running {
        progress: 0.0,
        base: Box::new(state.scene.clone()),
        cancelling: false,
    };
    outside.push(Outside::StartRetime {
        scene: Box::new(state.scene.clone()),
        settings: state.retime.settings(),
    });
}

/// Asks the running retime to stop after its current dry run.
pub(super) fn cancel(state: &mut EditorState, outside: &mut Vec<Outside>) {
    if let RetimeRun::Running { cancelling, .. } = &mut state.retime.run {
        *cancelling = true;
        outside.push(Outside::CancelRetime);
    }
}

/// Writes a finished retime's timing into the scene as one undo step, unless the scene changed
/// since the retime started.
pub(super) fn apply_result(state: &mut EditorState) {
    let RetimeRun::Finished(report) = &state.retime.run else {
        return;
    };
    if report.base != state.scene {
        state.say(
            Level::Warning,
            "the scene changed since this retime started: its result is stale; retime again",
        );
        return;
    }
    let retimed = report.retimed.clone();
    let message = format!(
        "applied the retimed timing: cycle {:.2} s, was {:.2} s (one undo step)",
        report.after.cycle_time_s, report.before.cycle_time_s
    );
    edit(state, None, |state| state.scene = retimed);
    // The torque share became the scene's derating: torque use at the pose follows it.
    state.pose_changed();
    state.retime.run = RetimeRun::Idle;
    state.say(Level::Info, message);
}

/// Drops a finished retime's result.
pub(super) fn discard(state: &mut EditorState) {
    if matches!(state.retime.run, RetimeRun::Finished(_)) {
        state.retime.run = RetimeRun::Idle;
        state.say(Level::Info, "discarded the retimed timing");
    }
}
