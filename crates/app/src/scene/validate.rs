//! Rules across fields: ordered limits, positive masses and lengths, monotonic calibrations
//! within the hobby-servo pulse range, waypoints and home inside the limits, a joint count that
//! matches the arm type. Every broken rule is reported, each at its JSON path.

use armwright_kinematics::MAX_JOINTS;

use super::document::*;
use super::problem::{Problem, child, item};

/// Shortest pulse width a scene may use, in µs (hobby servos: common practice 500–2500 µs).
pub const PULSE_FLOOR_US: u32 = 500;
/// Longest pulse width a scene may use, in µs.
pub const PULSE_CEILING_US: u32 = 2500;

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
    problems
}

fn positive(problems: &mut Vec<Problem>, path: String, value: f64, unit: &str) {
    if !(value.is_finite() && value > 0.0) {
        problems.push(Problem::new(
            path,
            format!("must be above 0 {unit}, got {value}"),
        ));
    }
}

fn non_negative(problems: &mut Vec<Problem>, path: String, value: f64, unit: &str) {
    if !(value.is_finite() && value >= 0.0) {
        problems.push(Problem::new(
            path,
            format!("must be 0 {unit} or more, got {value}"),
        ));
    }
}

fn finite(problems: &mut Vec<Problem>, path: String, values: &[f64]) {
    if !values.iter().all(|v| v.is_finite()) {
        problems.push(Problem::new(path, "every number must be finite"));
    }
}

fn pulse_in_range(problems: &mut Vec<Problem>, path: String, pulse_us: u32) {
    if !(PULSE_FLOOR_US..=PULSE_CEILING_US).contains(&pulse_us) {
        problems.push(Problem::new(
            path,
            format!(
                "{pulse_us} µs lies outside the hobby-servo range {PULSE_FLOOR_US}–{PULSE_CEILING_US} µs"
            ),
        ));
    }
}

fn check_shape(arm: &ArmDoc, problems: &mut Vec<Problem>) {
    let dims = "arm.dimensions";
    match &arm.shape {
        ArmShape::Scara(size) => {
            non_negative(
                problems,
                child(dims, "base_height_mm"),
                size.base_height_mm,
                "mm",
            );
            positive(
                problems,
                child(dims, "upper_arm_mm"),
                size.upper_arm_mm,
                "mm",
            );
            positive(problems, child(dims, "forearm_mm"), size.forearm_mm, "mm");
            non_negative(
                problems,
                child(dims, "tool_drop_mm"),
                size.tool_drop_mm,
                "mm",
            );
        }
        ArmShape::Articulated4(size) | ArmShape::Articulated5(size) => {
            non_negative(
                problems,
                child(dims, "base_height_mm"),
                size.base_height_mm,
                "mm",
            );
            positive(
                problems,
                child(dims, "upper_arm_mm"),
                size.upper_arm_mm,
                "mm",
            );
            positive(problems, child(dims, "forearm_mm"), size.forearm_mm, "mm");
            non_negative(
                problems,
                child(dims, "wrist_to_tool_mm"),
                size.wrist_to_tool_mm,
                "mm",
            );
        }
        ArmShape::ChainDh { rows, tool } => {
            chain_length(problems, "arm.chain.rows", rows.len());
            for (index, row) in rows.iter().enumerate() {
                finite(
                    problems,
                    item("arm.chain.rows", index),
                    &[row.a_mm, row.alpha_deg, row.d_mm, row.theta_deg],
                );
            }
            check_placement(problems, "arm.chain.tool", tool);
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
                finite(problems, child(&path, "origin_mm"), &axis.origin_mm);
            }
            check_placement(problems, "arm.chain.tool_home", tool_home);
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

fn check_placement(problems: &mut Vec<Problem>, path: &str, placement: &PlacementDoc) {
    finite(problems, child(path, "position_mm"), &placement.position_mm);
    finite(
        problems,
        child(path, "rotation_xyz_deg"),
        &placement.rotation_xyz_deg,
    );
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
                "a {} arm has {} joints, found {}",
                arm.shape.word(),
                kinds.len(),
                arm.joints.len()
            )
        };
        problems.push(Problem::new("arm.joints", message));
    }
    for (index, joint) in arm.joints.iter().enumerate() {
        let kind = kinds.get(index).copied().unwrap_or(JointKindDoc::Revolute);
        check_joint(joint, kind, &item("arm.joints", index), problems);
    }
}

fn check_joint(joint: &JointDoc, kind: JointKindDoc, path: &str, problems: &mut Vec<Problem>) {
    let unit = kind.unit();
    let (min_key, max_key, home_key) = (
        format!("min_{unit}"),
        format!("max_{unit}"),
        format!("home_{unit}"),
    );
    if joint.name.trim().is_empty() {
        problems.push(Problem::new(child(path, "name"), "must not be empty"));
    }
    // Written so that NaN limits count as unordered too.
    let ordered = joint.min < joint.max;
    if !ordered {
        problems.push(Problem::new(
            child(path, &max_key),
            format!(
                "{max_key} ({}) must be above {min_key} ({})",
                joint.max, joint.min
            ),
        ));
    } else if !(joint.home >= joint.min - LIMIT_SLACK && joint.home <= joint.max + LIMIT_SLACK) {
        problems.push(Problem::new(
            child(path, &home_key),
            format!(
                "{} {unit} lies outside the joint's limits {} to {} {unit}",
                joint.home, joint.min, joint.max
            ),
        ));
    }
    check_servo(&joint.servo, kind, &child(path, "servo"), problems);
    check_calibration(joint, kind, &child(path, "calibration"), problems);
    let link = child(path, "link");
    non_negative(problems, child(&link, "mass_g"), joint.link.mass_g, "g");
    finite(problems, child(&link, "centre_mm"), &joint.link.centre_mm);
    if let Some(inertia) = &joint.link.inertia_g_mm2 {
        let diagonal_ok = inertia[..3].iter().all(|v| v.is_finite() && *v >= 0.0);
        if !diagonal_ok || !inertia.iter().all(|v| v.is_finite()) {
            problems.push(Problem::new(
                child(&link, "inertia_g_mm2"),
                "Ixx, Iyy and Izz must be 0 g·mm² or more and every entry finite",
            ));
        }
    }
}

fn check_servo(servo: &ServoDoc, kind: JointKindDoc, path: &str, problems: &mut Vec<Problem>) {
    positive(
        problems,
        child(path, "stall_torque_ncm"),
        servo.stall_torque_ncm,
        "N·cm",
    );
    positive(
        problems,
        child(path, "no_load_speed_deg_per_s"),
        servo.no_load_speed_deg_per_s,
        "°/s",
    );
    non_negative(
        problems,
        child(path, "deadband_us"),
        servo.deadband_us,
        "µs",
    );
    let band = child(path, "proportional_band");
    match servo.proportional_band {
        BandDoc::Us(us) => positive(problems, child(&band, "us"), us, "µs"),
        BandDoc::Deg(deg) => positive(problems, child(&band, "deg"), deg, "°"),
    }
    non_negative(
        problems,
        child(path, "backlash_deg"),
        servo.backlash_deg,
        "°",
    );
    positive(problems, child(path, "mass_g"), servo.mass_g, "g");
    finite(
        problems,
        child(path, "mount_offset_mm"),
        &servo.mount_offset_mm,
    );
    match (kind, servo.pinion_radius_mm) {
        (JointKindDoc::Prismatic, Some(radius)) => {
            positive(problems, child(path, "pinion_radius_mm"), radius, "mm");
        }
        (JointKindDoc::Prismatic, None) => problems.push(Problem::new(
            child(path, "pinion_radius_mm"),
            "a prismatic joint's servo needs its pinion radius in mm",
        )),
        (JointKindDoc::Revolute, Some(_)) => problems.push(Problem::new(
            child(path, "pinion_radius_mm"),
            "only a prismatic joint's servo has a pinion radius",
        )),
        (JointKindDoc::Revolute, None) => {}
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
    let position_key = match kind {
        JointKindDoc::Revolute => "angle_deg",
        JointKindDoc::Prismatic => "position_mm",
    };
    let points = child(path, "points");
    for (index, point) in calibration.points.iter().enumerate() {
        let at = item(&points, index);
        pulse_in_range(problems, child(&at, "pulse_us"), point.pulse_us);
        finite(problems, child(&at, position_key), &[point.position]);
    }
    let min = calibration.pulse_min_us;
    let max = calibration.pulse_max_us;
    pulse_in_range(problems, child(path, "pulse_min_us"), min);
    pulse_in_range(problems, child(path, "pulse_max_us"), max);
    let range_ok = min < max;
    if !range_ok {
        problems.push(Problem::new(
            child(path, "pulse_max_us"),
            format!("pulse_max_us ({max} µs) must be above pulse_min_us ({min} µs)"),
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
                a.position
            ),
        ));
    }
    if a.pulse_us == b.pulse_us {
        monotonic = false;
        problems.push(Problem::new(
            child(&item(&points, 1), "pulse_us"),
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
                child(&item(&points, index), "pulse_us"),
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
                joint.min, joint.max
            ),
        ));
    }
}

fn check_arm_masses(arm: &ArmDoc, problems: &mut Vec<Problem>) {
    non_negative(problems, "arm.tool.mass_g".into(), arm.tool.mass_g, "g");
    finite(problems, "arm.tool.centre_mm".into(), &arm.tool.centre_mm);
    non_negative(problems, "arm.payload_g".into(), arm.payload_g, "g");
    if let Some(gripper) = &arm.gripper {
        pulse_in_range(
            problems,
            "arm.gripper.open_pulse_us".into(),
            gripper.open_pulse_us,
        );
        pulse_in_range(
            problems,
            "arm.gripper.closed_pulse_us".into(),
            gripper.closed_pulse_us,
        );
        if gripper.open_pulse_us == gripper.closed_pulse_us {
            problems.push(Problem::new(
                "arm.gripper.closed_pulse_us",
                "must differ from open_pulse_us, or the gripper never moves",
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
                            "{value} {unit} lies outside {} limits {} to {} {unit}",
                            quoted(&joint.name),
                            joint.min,
                            joint.max
                        ),
                    ));
                }
            }
        }
        let share = waypoint.speed_share_pct;
        if !(share > 0.0 && share <= 100.0) {
            problems.push(Problem::new(
                child(&path, "speed_share_pct"),
                format!("must be above 0 % and at most 100 %, got {share}"),
            ));
        }
        non_negative(problems, child(&path, "dwell_ms"), waypoint.dwell_ms, "ms");
    }
}

fn quoted(name: &str) -> String {
    format!("\"{name}\"'s")
}

fn check_timing(timing: &Timing, problems: &mut Vec<Problem>) {
    let derating = timing.torque_derating_pct;
    if !(derating > 0.0 && derating <= 100.0) {
        problems.push(Problem::new(
            "timing.torque_derating_pct",
            format!("must be above 0 % and at most 100 %, got {derating}"),
        ));
    }
    positive(
        problems,
        "timing.settle_band_mm".into(),
        timing.settle_band_mm,
        "mm",
    );
    positive(
        problems,
        "timing.max_overshoot_mm".into(),
        timing.max_overshoot_mm,
        "mm",
    );
    positive(
        problems,
        "timing.damping_ratio".into(),
        timing.damping_ratio,
        "",
    );
}

/// Each entry of `timing.joint_limits` names exactly one joint, no joint twice, and gives at
/// least one limit, each above zero.
fn check_joint_limits(scene: &Scene, kinds: &[JointKindDoc], problems: &mut Vec<Problem>) {
    let joints = &scene.arm.joints;
    for (index, limit) in scene.timing.joint_limits.iter().enumerate() {
        let path = item("timing.joint_limits", index);
        let named: Vec<usize> = (0..joints.len())
            .filter(|&j| joints[j].name == limit.joint)
            .collect();
        let kind = match named.as_slice() {
            [joint] => kinds.get(*joint).copied().unwrap_or(JointKindDoc::Revolute),
            [] => {
                let names: Vec<String> = joints.iter().map(|j| format!("\"{}\"", j.name)).collect();
                problems.push(Problem::new(
                    child(&path, "joint"),
                    format!(
                        "no joint is named \"{}\"; the arm's joints are {}",
                        limit.joint,
                        names.join(", ")
                    ),
                ));
                continue;
            }
            several => {
                problems.push(Problem::new(
                    child(&path, "joint"),
                    format!(
                        "{} joints are named \"{}\"; give them different names to set their limits",
                        several.len(),
                        limit.joint
                    ),
                ));
                continue;
            }
        };
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
        let (velocity_key, acceleration_key) = JointLimitDoc::keys(kind);
        let unit = kind.unit();
        let values = [
            (
                velocity_key,
                limit.max_velocity_deg_or_mm_per_s,
                format!("{unit}/s"),
            ),
            (
                acceleration_key,
                limit.max_acceleration_deg_or_mm_per_s2,
                format!("{unit}/s²"),
            ),
        ];
        for (key, value, unit) in &values {
            if let Some(value) = value {
                positive(problems, child(&path, key), *value, unit);
            }
        }
        if values.iter().all(|(_, value, _)| value.is_none()) {
            problems.push(Problem::new(
                path,
                format!("give {velocity_key}, {acceleration_key} or both"),
            ));
        }
    }
}

fn check_workspace(workspace: &Workspace, problems: &mut Vec<Problem>) {
    if let Some(height) = workspace.table_height_mm {
        finite(problems, "workspace.table_height_mm".into(), &[height]);
    }
    let objects = workspace
        .boxes
        .iter()
        .enumerate()
        .map(|(i, b)| (item("workspace.boxes", i), &b.position_mm, &b.size_mm))
        .chain(
            workspace
                .trays
                .iter()
                .enumerate()
                .map(|(i, t)| (item("workspace.trays", i), &t.position_mm, &t.size_mm)),
        );
    for (path, position, size) in objects {
        finite(problems, child(&path, "position_mm"), position);
        for (axis, value) in ["x", "y", "z"].iter().zip(size) {
            if !(value.is_finite() && *value > 0.0) {
                problems.push(Problem::new(
                    child(&path, "size_mm"),
                    format!("every side must be above 0 mm; {axis} is {value}"),
                ));
            }
        }
    }
    for (index, tray) in workspace.trays.iter().enumerate() {
        if tray.pockets.contains(&0) {
            problems.push(Problem::new(
                child(&item("workspace.trays", index), "pockets"),
                "a tray needs at least one pocket along X and along Y",
            ));
        }
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
    if link.baud == 0 {
        problems.push(Problem::new("link.baud", "must be above 0"));
    }
    if !(link.rate_hz > 0.0 && link.rate_hz <= 1000.0) {
        problems.push(Problem::new(
            "link.rate_hz",
            format!(
                "must be above 0 Hz and at most 1000 Hz, got {}",
                link.rate_hz
            ),
        ));
    }
}
