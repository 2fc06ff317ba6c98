//! Rules across fields: ordered limits, monotonic calibrations inside the servo's accepted
//! pulses, waypoints and home inside the limits, a joint count that matches the arm type, limits
//! naming real joints. Each single number's range comes from its row in the field table and is
//! checked here in the same walk, so that every problem is reported in the order of the file,
//! each at its JSON path.

use armwright_kinematics::MAX_JOINTS;

use super::document::*;
use super::field::{Field, shown};
use super::field_table as table;
use super::problem::{Problem, child, item};

/// Slack when comparing a position with its limits, in the file's units (degrees or mm), so
/// that a value written with a few decimals right at a limit counts as inside.
const LIMIT_SLACK: f64 = 1e-9;

/// Every problem with the scene's contents, each at its JSON path; empty when the scene is
/// usable.
pub fn validate(scene: &Scene) -> Vec<Problem> {
    let mut problems = Vec::new();
    let kinds = scene.arm.shape.joint_kinds();
    check_shape(&scene.arm, &mut problems);
    check_joints(&scene.arm, &kinds, &mut problems);
    check_arm_masses(&scene.arm, &mut problems);
    check_waypoints(scene, &kinds, &mut problems);
    check_timing(&scene.timing, &mut problems);
    check_joint_limits(scene, &kinds, &mut problems);
    check_workspace(&scene.workspace, &mut problems);
    check_link(&scene.link, &mut problems);
    super::inputs::fit_inputs(scene, &mut problems);
    problems
}

/// What stops a valid scene from being planned: a sequence of fewer than two waypoints has no
/// move. Not part of [`validate`]: such a scene is a valid arm for pose, reach and the envelope,
/// and the editor checks scenes while their sequence is still being taught; `armwright check`
/// notes it.
pub fn sequence_problems(scene: &Scene) -> Vec<Problem> {
    let count = scene.waypoints.len();
    if count >= 2 {
        return Vec::new();
    }
    let has = match count {
        0 => "has none".to_string(),
        _ => "has 1".to_string(),
    };
    vec![Problem::new(
        "waypoints",
        format!(
            "the sequence needs at least two waypoints to make a move; it {has}, so plan, \
             simulate, retime and stream have nothing to do"
        ),
    )]
}

/// Every value of `rows` in `doc` inside its range, each field at `path`.`key`.
pub(super) fn ranges<T>(
    rows: &[Field<T>],
    doc: &T,
    kind: JointKindDoc,
    path: &str,
    problems: &mut Vec<Problem>,
) {
    for row in rows {
        row.check(doc, kind, &child(path, row.key(kind)), problems);
    }
}

fn check_shape(arm: &ArmDoc, problems: &mut Vec<Problem>) {
    let dims = "arm.dimensions";
    let revolute = JointKindDoc::Revolute;
    match &arm.shape {
        ArmShape::Scara(size) => ranges(table::scara::ROWS, size, revolute, dims, problems),
        ArmShape::Articulated4(size) | ArmShape::Articulated5(size) => {
            ranges(table::articulated::ROWS, size, revolute, dims, problems);
        }
        ArmShape::ChainDh { rows, tool } => {
            chain_length(problems, "arm.chain.rows", rows.len());
            for (index, row) in rows.iter().enumerate() {
                let path = item("arm.chain.rows", index);
                ranges(table::dh_row::ROWS, row, revolute, &path, problems);
            }
            ranges(
                table::placement::ROWS,
                tool,
                revolute,
                "arm.chain.tool",
                problems,
            );
        }
        ArmShape::ChainOriginAxis { axes, tool_home } => {
            chain_length(problems, "arm.chain.axes", axes.len());
            for (index, axis) in axes.iter().enumerate() {
                let path = item("arm.chain.axes", index);
                let length = axis.axis.iter().map(|v| v * v).sum::<f64>().sqrt();
                if !(length.is_finite() && length > 1e-9) {
                    problems.push(Problem::new(
                        child(&path, "axis"),
                        "must be a direction of non-zero, finite length",
                    ));
                }
                ranges(table::axis::ROWS, axis, revolute, &path, problems);
            }
            let path = "arm.chain.tool_home";
            ranges(table::placement::ROWS, tool_home, revolute, path, problems);
        }
    }
}

fn chain_length(problems: &mut Vec<Problem>, path: &str, count: usize) {
    if count == 0 {
        problems.push(Problem::new(
            path,
            "a chain needs at least one joint; the list is empty",
        ));
    } else if count > MAX_JOINTS {
        problems.push(Problem::new(
            path,
            format!("a chain has at most {MAX_JOINTS} joints, found {count}"),
        ));
    }
}

fn check_joints(arm: &ArmDoc, kinds: &[JointKindDoc], problems: &mut Vec<Problem>) {
    let is_chain = matches!(
        arm.shape,
        ArmShape::ChainDh { .. } | ArmShape::ChainOriginAxis { .. }
    );
    if arm.joints.is_empty() {
        problems.push(Problem::new(
            "arm.joints",
            "the arm needs at least one joint; the list is empty",
        ));
    } else if arm.joints.len() != kinds.len() && !(is_chain && kinds.is_empty()) {
        let message = if is_chain {
            format!(
                "the chain describes {} joints but {} are listed here",
                kinds.len(),
                arm.joints.len()
            )
        } else {
            format!(
                "{} {} arm has {} joints, {} listed here",
                article(arm.shape.word()),
                arm.shape.word(),
                kinds.len(),
                counted(arm.joints.len(), "is", "are")
            )
        };
        problems.push(Problem::new("arm.joints", message));
    }
    for (index, joint) in arm.joints.iter().enumerate() {
        let kind = kinds.get(index).copied().unwrap_or(JointKindDoc::Revolute);
        check_joint(joint, kind, &item("arm.joints", index), problems);
    }
}

/// "a" or "an" before `word`, by its first letter.
fn article(word: &str) -> &'static str {
    match word.chars().next() {
        Some('a' | 'e' | 'i' | 'o' | 'u') => "an",
        _ => "a",
    }
}

/// "1 is" / "3 are".
fn counted(count: usize, one: &str, many: &str) -> String {
    format!("{count} {}", if count == 1 { one } else { many })
}

fn check_joint(joint: &JointDoc, kind: JointKindDoc, path: &str, problems: &mut Vec<Problem>) {
    let unit = kind.unit();
    let (min_key, max_key, home_key) = (
        table::joint::MIN.key(kind),
        table::joint::MAX.key(kind),
        table::joint::HOME.key(kind),
    );
    if joint.name.trim().is_empty() {
        problems.push(Problem::new(child(path, "name"), "must not be empty"));
    }
    ranges(table::joint::ROWS, joint, kind, path, problems);
    // Written so that NaN limits count as unordered too.
    let ordered = joint.min < joint.max;
    if !ordered {
        problems.push(Problem::new(
            child(path, max_key),
            format!(
                "{max_key} ({}) must be above {min_key} ({})",
                shown(joint.max),
                shown(joint.min)
            ),
        ));
    } else if !(joint.home >= joint.min - LIMIT_SLACK && joint.home <= joint.max + LIMIT_SLACK) {
        problems.push(Problem::new(
            child(path, home_key),
            format!(
                "{} {unit} lies outside the joint's limits {} to {} {unit}",
                shown(joint.home),
                shown(joint.min),
                shown(joint.max)
            ),
        ));
    }
    check_servo(&joint.servo, kind, &child(path, "servo"), problems);
    check_calibration(joint, kind, &child(path, "calibration"), problems);
    let link = child(path, "link");
    ranges(table::link_mass::ROWS, &joint.link, kind, &link, problems);
    if let Some(inertia) = &joint.link.inertia_g_mm2
        && !inertia[..3].iter().all(|v| *v >= 0.0)
    {
        problems.push(Problem::new(
            child(&link, table::link_mass::INERTIA.key(kind)),
            "Ixx, Iyy and Izz must be 0 g·mm² or more",
        ));
    }
}

fn check_servo(servo: &ServoDoc, kind: JointKindDoc, path: &str, problems: &mut Vec<Problem>) {
    ranges(table::servo::ROWS, servo, kind, path, problems);
    let band = child(path, "proportional_band");
    ranges(
        table::band::ROWS,
        &servo.proportional_band,
        kind,
        &band,
        problems,
    );
    let pinion = child(path, table::servo::PINION_RADIUS.key(kind));
    match (kind, servo.pinion_radius_mm) {
        (JointKindDoc::Prismatic, None) => problems.push(Problem::new(
            pinion,
            "a prismatic joint's servo needs its pinion radius in mm",
        )),
        (JointKindDoc::Revolute, Some(_)) => problems.push(Problem::new(
            pinion,
            "only a prismatic joint's servo has a pinion radius",
        )),
        _ => {}
    }
}

fn check_calibration(
    joint: &JointDoc,
    kind: JointKindDoc,
    path: &str,
    problems: &mut Vec<Problem>,
) {
    let calibration = &joint.calibration;
    let unit = kind.unit();
    let position_key = table::calibration_point::POSITION.key(kind);
    let pulse_key = table::calibration_point::PULSE.key(kind);
    let points = child(path, "points");
    for (index, point) in calibration.points.iter().enumerate() {
        let at = item(&points, index);
        ranges(table::calibration_point::ROWS, point, kind, &at, problems);
    }
    ranges(table::calibration::ROWS, calibration, kind, path, problems);
    let min = calibration.pulse_min_us;
    let max = calibration.pulse_max_us;
    let range_ok = min < max;
    if !range_ok {
        let (min_key, max_key) = (
            table::calibration::PULSE_MIN.key(kind),
            table::calibration::PULSE_MAX.key(kind),
        );
        problems.push(Problem::new(
            child(path, max_key),
            format!("{max_key} ({max} µs) must be above {min_key} ({min} µs)"),
        ));
    }
    let [a, b] = calibration.points;
    let mut monotonic = true;
    if a.position == b.position {
        monotonic = false;
        problems.push(Problem::new(
            child(&item(&points, 1), position_key),
            format!(
                "the two calibration points must be at different positions (both {} {unit})",
                shown(a.position)
            ),
        ));
    }
    if a.pulse_us == b.pulse_us {
        monotonic = false;
        problems.push(Problem::new(
            child(&item(&points, 1), pulse_key),
            format!(
                "the two calibration points must have different pulse widths (both {} µs), or the pulse would not follow the joint",
                a.pulse_us
            ),
        ));
    }
    if !range_ok {
        return;
    }
    for (index, point) in calibration.points.iter().enumerate() {
        if point.pulse_us < min || point.pulse_us > max {
            problems.push(Problem::new(
                child(&item(&points, index), pulse_key),
                format!(
                    "{} µs lies outside the servo's accepted {min}–{max} µs",
                    point.pulse_us
                ),
            ));
        }
    }
    let ordered = joint.min < joint.max;
    if !monotonic || !ordered {
        return;
    }
    // The whole travel between the limits must map to pulses the servo accepts.
    let slope = (f64::from(b.pulse_us) - f64::from(a.pulse_us)) / (b.position - a.position);
    let pulse_at = |position: f64| f64::from(a.pulse_us) + (position - a.position) * slope;
    let (low, high) = {
        let (p, q) = (pulse_at(joint.min), pulse_at(joint.max));
        (p.min(q), p.max(q))
    };
    if low < f64::from(min) - 1e-6 || high > f64::from(max) + 1e-6 {
        problems.push(Problem::new(
            path,
            format!(
                "the joint's limits {} to {} {unit} need pulses {low:.0}–{high:.0} µs, outside the accepted {min}–{max} µs",
                shown(joint.min),
                shown(joint.max)
            ),
        ));
    }
}

fn check_arm_masses(arm: &ArmDoc, problems: &mut Vec<Problem>) {
    let revolute = JointKindDoc::Revolute;
    ranges(table::tool::ROWS, &arm.tool, revolute, "arm.tool", problems);
    ranges(table::arm::ROWS, arm, revolute, "arm", problems);
    if let Some(gripper) = &arm.gripper {
        ranges(
            table::gripper::ROWS,
            gripper,
            revolute,
            "arm.gripper",
            problems,
        );
        if gripper.open_pulse_us == gripper.closed_pulse_us {
            let (open, closed) = (
                table::gripper::OPEN.key(revolute),
                table::gripper::CLOSED.key(revolute),
            );
            problems.push(Problem::new(
                child("arm.gripper", closed),
                format!("must differ from {open}, or the gripper never moves"),
            ));
        }
    }
}

fn check_waypoints(scene: &Scene, kinds: &[JointKindDoc], problems: &mut Vec<Problem>) {
    let joints = &scene.arm.joints;
    for (index, waypoint) in scene.waypoints.iter().enumerate() {
        let path = item("waypoints", index);
        if waypoint.name.trim().is_empty() {
            problems.push(Problem::new(child(&path, "name"), "must not be empty"));
        }
        let positions = child(&path, "joints_deg_or_mm");
        if waypoint.joints_deg_or_mm.len() != joints.len() {
            problems.push(Problem::new(
                &positions,
                format!(
                    "expected {} joint positions (one per joint), found {}",
                    joints.len(),
                    waypoint.joints_deg_or_mm.len()
                ),
            ));
        } else {
            for (j, (joint, &value)) in joints.iter().zip(&waypoint.joints_deg_or_mm).enumerate() {
                let unit = kinds
                    .get(j)
                    .copied()
                    .unwrap_or(JointKindDoc::Revolute)
                    .unit();
                // Unordered limits are reported once, at the joint, not at every waypoint.
                let ordered = joint.min < joint.max;
                let inside = value >= joint.min - LIMIT_SLACK && value <= joint.max + LIMIT_SLACK;
                if ordered && !inside {
                    problems.push(Problem::new(
                        item(&positions, j),
                        format!(
                            "{} {unit} lies outside {} limits {} to {} {unit}",
                            shown(value),
                            quoted(&joint.name),
                            shown(joint.min),
                            shown(joint.max)
                        ),
                    ));
                }
            }
        }
        // Each position is checked against its joint's limits above, not the row's wide range.
        let rows = table::waypoint::ROWS
            .iter()
            .filter(|row| row.key != table::waypoint::JOINTS.key);
        for row in rows {
            let kind = JointKindDoc::Revolute;
            row.check(waypoint, kind, &child(&path, row.key(kind)), problems);
        }
    }
}

fn quoted(name: &str) -> String {
    format!("\"{name}\"'s")
}

fn check_timing(timing: &Timing, problems: &mut Vec<Problem>) {
    ranges(
        table::timing::ROWS,
        timing,
        JointKindDoc::Revolute,
        "timing",
        problems,
    );
}

/// Each entry of `timing.joint_limits` names exactly one joint, no joint twice, and gives at
/// least one limit, each above zero.
fn check_joint_limits(scene: &Scene, kinds: &[JointKindDoc], problems: &mut Vec<Problem>) {
    let joints = &scene.arm.joints;
    for (index, limit) in scene.timing.joint_limits.iter().enumerate() {
        let path = item("timing.joint_limits", index);
        let Some(joint) = joint_named(joints, &limit.joint, &path, "set their limits", problems)
        else {
            continue;
        };
        let kind = kinds.get(joint).copied().unwrap_or(JointKindDoc::Revolute);
        if let Some(earlier) = scene.timing.joint_limits[..index]
            .iter()
            .position(|other| other.joint == limit.joint)
        {
            problems.push(Problem::new(
                child(&path, "joint"),
                format!(
                    "\"{}\" already has limits in timing.joint_limits[{earlier}]",
                    limit.joint
                ),
            ));
        }
        let (velocity_key, acceleration_key, jerk_key) = (
            table::joint_limit::VELOCITY.key(kind),
            table::joint_limit::ACCELERATION.key(kind),
            table::joint_limit::JERK.key(kind),
        );
        ranges(table::joint_limit::ROWS, limit, kind, &path, problems);
        if limit.max_velocity_deg_or_mm_per_s.is_none()
            && limit.max_acceleration_deg_or_mm_per_s2.is_none()
            && limit.max_jerk_deg_or_mm_per_s3.is_none()
        {
            problems.push(Problem::new(
                path,
                format!("give at least one of {velocity_key}, {acceleration_key} and {jerk_key}"),
            ));
        }
    }
}

fn check_workspace(workspace: &Workspace, problems: &mut Vec<Problem>) {
    let revolute = JointKindDoc::Revolute;
    ranges(
        table::workspace::ROWS,
        workspace,
        revolute,
        "workspace",
        problems,
    );
    for (index, object) in workspace.boxes.iter().enumerate() {
        let path = item("workspace.boxes", index);
        ranges(table::boxes::ROWS, object, revolute, &path, problems);
    }
    for (index, tray) in workspace.trays.iter().enumerate() {
        let path = item("workspace.trays", index);
        ranges(table::tray::ROWS, tray, revolute, &path, problems);
    }
}

fn check_link(link: &LinkSettings, problems: &mut Vec<Problem>) {
    if let Device::Port(port) = &link.device
        && port.trim().is_empty()
    {
        problems.push(Problem::new(
            "link.device",
            "must be \"simulated\" or a serial port path",
        ));
    }
    ranges(
        table::link::ROWS,
        link,
        JointKindDoc::Revolute,
        "link",
        problems,
    );
}

/// The index of the one joint named `name`, for the entry at `path` that refers to it; `None`
/// after a problem at `path.joint` when no joint or several joints carry that name (`purpose`
/// says what distinct names would allow, e.g. "set their limits").
pub(super) fn joint_named(
    joints: &[JointDoc],
    name: &str,
    path: &str,
    purpose: &str,
    problems: &mut Vec<Problem>,
) -> Option<usize> {
    let named: Vec<usize> = (0..joints.len())
        .filter(|&j| joints[j].name == name)
        .collect();
    match named.as_slice() {
        [joint] => Some(*joint),
        [] => {
            let names: Vec<String> = joints.iter().map(|j| format!("\"{}\"", j.name)).collect();
            problems.push(Problem::new(
                child(path, "joint"),
                format!(
                    "no joint is named \"{name}\"; the arm's joints are {}",
                    names.join(", ")
                ),
            ));
            None
        }
        several => {
            problems.push(Problem::new(
                child(path, "joint"),
                format!(
                    "{} joints are named \"{name}\"; give them different names to {purpose}",
                    several.len()
                ),
            ));
            None
        }
    }
}
