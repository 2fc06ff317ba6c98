//! Scene types → JSON, keys in a fixed, readable order (format and version first). The exact
//! mirror of `decode.rs`: whatever is written here reads back to the same scene.

use serde::ser::{Serialize, SerializeMap, SerializeSeq, Serializer};

use super::document::*;
use super::migrate::{CURRENT_VERSION, FORMAT_NAME};

/// A JSON value whose object keys keep the order they were added in.
pub(crate) enum Out {
    Number(f64),
    Whole(u64),
    Text(String),
    List(Vec<Out>),
    Object(Vec<(String, Out)>),
}

impl Serialize for Out {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        match self {
            Out::Number(value) => serializer.serialize_f64(*value),
            Out::Whole(value) => serializer.serialize_u64(*value),
            Out::Text(value) => serializer.serialize_str(value),
            Out::List(items) => {
                let mut seq = serializer.serialize_seq(Some(items.len()))?;
                for entry in items {
                    seq.serialize_element(entry)?;
                }
                seq.end()
            }
            Out::Object(entries) => {
                let mut map = serializer.serialize_map(Some(entries.len()))?;
                for (key, value) in entries {
                    map.serialize_entry(key, value)?;
                }
                map.end()
            }
        }
    }
}

/// Builds one object, key by key.
struct Obj(Vec<(String, Out)>);

impl Obj {
    fn new() -> Obj {
        Obj(Vec::new())
    }
    fn put(mut self, key: &str, value: Out) -> Obj {
        self.0.push((key.to_string(), value));
        self
    }
    fn num(self, key: &str, value: f64) -> Obj {
        self.put(key, Out::Number(value))
    }
    fn whole(self, key: &str, value: u32) -> Obj {
        self.put(key, Out::Whole(u64::from(value)))
    }
    fn text(self, key: &str, value: &str) -> Obj {
        self.put(key, Out::Text(value.to_string()))
    }
    fn nums(self, key: &str, values: &[f64]) -> Obj {
        self.put(key, numbers(values))
    }
    fn done(self) -> Out {
        Out::Object(self.0)
    }
}

fn numbers(values: &[f64]) -> Out {
    Out::List(values.iter().map(|&v| Out::Number(v)).collect())
}

/// The whole scene as an ordered JSON value.
pub(crate) fn encode_scene(scene: &Scene) -> Out {
    Obj::new()
        .text("format", FORMAT_NAME)
        .put("version", Out::Whole(CURRENT_VERSION))
        .text("description", &scene.description)
        .put("arm", arm(&scene.arm))
        .put(
            "waypoints",
            Out::List(scene.waypoints.iter().map(waypoint).collect()),
        )
        .put("timing", timing(&scene.timing, &scene.arm))
        .put("workspace", workspace(&scene.workspace))
        .put("link", link(&scene.link))
        .done()
}

fn arm(arm: &ArmDoc) -> Out {
    let mut out = Obj::new().text("type", arm.shape.word());
    out = match &arm.shape {
        ArmShape::Scara(size) => out.put(
            "dimensions",
            Obj::new()
                .num("base_height_mm", size.base_height_mm)
                .num("upper_arm_mm", size.upper_arm_mm)
                .num("forearm_mm", size.forearm_mm)
                .num("tool_drop_mm", size.tool_drop_mm)
                .done(),
        ),
        ArmShape::Articulated4(size) | ArmShape::Articulated5(size) => out.put(
            "dimensions",
            Obj::new()
                .num("base_height_mm", size.base_height_mm)
                .num("upper_arm_mm", size.upper_arm_mm)
                .num("forearm_mm", size.forearm_mm)
                .num("wrist_to_tool_mm", size.wrist_to_tool_mm)
                .done(),
        ),
        ArmShape::ChainDh { rows, tool } => out.put(
            "chain",
            Obj::new()
                .text("convention", "standard_dh")
                .put(
                    "rows",
                    Out::List(
                        rows.iter()
                            .map(|row| {
                                Obj::new()
                                    .text("kind", row.kind.word())
                                    .num("a_mm", row.a_mm)
                                    .num("alpha_deg", row.alpha_deg)
                                    .num("d_mm", row.d_mm)
                                    .num("theta_deg", row.theta_deg)
                                    .done()
                            })
                            .collect(),
                    ),
                )
                .put("tool", placement(tool))
                .done(),
        ),
        ArmShape::ChainOriginAxis { axes, tool_home } => out.put(
            "chain",
            Obj::new()
                .text("convention", "origin_axis")
                .put(
                    "axes",
                    Out::List(
                        axes.iter()
                            .map(|axis| {
                                Obj::new()
                                    .text("kind", axis.kind.word())
                                    .nums("axis", &axis.axis)
                                    .nums("origin_mm", &axis.origin_mm)
                                    .done()
                            })
                            .collect(),
                    ),
                )
                .put("tool_home", placement(tool_home))
                .done(),
        ),
    };
    let kinds = arm.shape.joint_kinds();
    let joints = arm
        .joints
        .iter()
        .enumerate()
        .map(|(index, spec)| {
            let kind = kinds.get(index).copied().unwrap_or(JointKindDoc::Revolute);
            joint(spec, kind)
        })
        .collect();
    out = out
        .put("joints", Out::List(joints))
        .put(
            "tool",
            Obj::new()
                .num("mass_g", arm.tool.mass_g)
                .nums("centre_mm", &arm.tool.centre_mm)
                .done(),
        )
        .num("payload_g", arm.payload_g);
    if let Some(gripper) = &arm.gripper {
        out = out.put(
            "gripper",
            Obj::new()
                .whole("open_pulse_us", gripper.open_pulse_us)
                .whole("closed_pulse_us", gripper.closed_pulse_us)
                .done(),
        );
    }
    out.done()
}

fn placement(placement: &PlacementDoc) -> Out {
    Obj::new()
        .nums("position_mm", &placement.position_mm)
        .nums("rotation_xyz_deg", &placement.rotation_xyz_deg)
        .done()
}

fn joint(joint: &JointDoc, kind: JointKindDoc) -> Out {
    let unit = kind.unit();
    let servo = &joint.servo;
    let band = match servo.proportional_band {
        BandDoc::Us(us) => Obj::new().num("us", us),
        BandDoc::Deg(deg) => Obj::new().num("deg", deg),
    };
    let mut servo_out = Obj::new()
        .num("stall_torque_ncm", servo.stall_torque_ncm)
        .num("no_load_speed_deg_per_s", servo.no_load_speed_deg_per_s)
        .num("deadband_us", servo.deadband_us)
        .put("proportional_band", band.done())
        .num("backlash_deg", servo.backlash_deg)
        .num("mass_g", servo.mass_g)
        .nums("mount_offset_mm", &servo.mount_offset_mm);
    // The decoder reads the pinion radius for prismatic joints only; write it for them only.
    if kind == JointKindDoc::Prismatic {
        servo_out = servo_out.num("pinion_radius_mm", servo.pinion_radius_mm.unwrap_or(0.0));
    }
    let position_key = match kind {
        JointKindDoc::Revolute => "angle_deg",
        JointKindDoc::Prismatic => "position_mm",
    };
    let points = joint
        .calibration
        .points
        .iter()
        .map(|point| {
            Obj::new()
                .num(position_key, point.position)
                .whole("pulse_us", point.pulse_us)
                .done()
        })
        .collect();
    let mut link = Obj::new()
        .num("mass_g", joint.link.mass_g)
        .nums("centre_mm", &joint.link.centre_mm);
    if let Some(inertia) = &joint.link.inertia_g_mm2 {
        link = link.nums("inertia_g_mm2", inertia);
    }
    Obj::new()
        .text("name", &joint.name)
        .num(&format!("min_{unit}"), joint.min)
        .num(&format!("max_{unit}"), joint.max)
        .num(&format!("home_{unit}"), joint.home)
        .put("servo", servo_out.done())
        .put(
            "calibration",
            Obj::new()
                .put("points", Out::List(points))
                .whole("pulse_min_us", joint.calibration.pulse_min_us)
                .whole("pulse_max_us", joint.calibration.pulse_max_us)
                .done(),
        )
        .put("link", link.done())
        .done()
}

fn waypoint(waypoint: &Waypoint) -> Out {
    Obj::new()
        .text("name", &waypoint.name)
        .nums("joints_deg_or_mm", &waypoint.joints_deg_or_mm)
        .text(
            "move",
            match waypoint.move_kind {
                MoveKind::Joint => "joint",
                MoveKind::Straight => "straight",
            },
        )
        .text(
            "profile",
            match waypoint.profile {
                ProfileKind::Trapezoid => "trapezoid",
                ProfileKind::DoubleS => "double_s",
            },
        )
        .num("speed_share_pct", waypoint.speed_share_pct)
        .num("dwell_ms", waypoint.dwell_ms)
        .text(
            "arrival",
            match waypoint.arrival {
                Arrival::Stop => "stop",
                Arrival::PassThrough => "pass_through",
            },
        )
        .text(
            "gripper",
            match waypoint.gripper {
                GripperState::Open => "open",
                GripperState::Closed => "closed",
            },
        )
        .done()
}

fn timing(timing: &Timing, arm: &ArmDoc) -> Out {
    let out = Obj::new()
        .num("torque_derating_pct", timing.torque_derating_pct)
        .num("settle_band_mm", timing.settle_band_mm)
        .num("max_overshoot_mm", timing.max_overshoot_mm)
        .num("damping_ratio", timing.damping_ratio)
        .text(
            "shaping",
            match timing.shaping {
                Shaping::None => "none",
                Shaping::Zv => "zv",
                Shaping::Zvd => "zvd",
            },
        );
    if timing.joint_limits.is_empty() {
        // Left out when unused, so that scenes without them read as before.
        return out.done();
    }
    let kinds = arm.shape.joint_kinds();
    let limits = timing
        .joint_limits
        .iter()
        .map(|limit| {
            let kind = arm
                .joints
                .iter()
                .position(|joint| joint.name == limit.joint)
                .and_then(|index| kinds.get(index).copied())
                .unwrap_or(JointKindDoc::Revolute);
            let (velocity_key, acceleration_key) = JointLimitDoc::keys(kind);
            let mut entry = Obj::new().text("joint", &limit.joint);
            if let Some(velocity) = limit.max_velocity_deg_or_mm_per_s {
                entry = entry.num(velocity_key, velocity);
            }
            if let Some(acceleration) = limit.max_acceleration_deg_or_mm_per_s2 {
                entry = entry.num(acceleration_key, acceleration);
            }
            entry.done()
        })
        .collect();
    out.put("joint_limits", Out::List(limits)).done()
}

fn workspace(workspace: &Workspace) -> Out {
    let mut out = Obj::new();
    if let Some(height) = workspace.table_height_mm {
        out = out.num("table_height_mm", height);
    }
    let boxes = workspace
        .boxes
        .iter()
        .map(|object| {
            Obj::new()
                .text("name", &object.name)
                .nums("position_mm", &object.position_mm)
                .nums("size_mm", &object.size_mm)
                .done()
        })
        .collect();
    let trays = workspace
        .trays
        .iter()
        .map(|tray| {
            Obj::new()
                .text("name", &tray.name)
                .nums("position_mm", &tray.position_mm)
                .nums("size_mm", &tray.size_mm)
                .put(
                    "pockets",
                    Out::List(
                        tray.pockets
                            .iter()
                            .map(|&n| Out::Whole(u64::from(n)))
                            .collect(),
                    ),
                )
                .done()
        })
        .collect();
    out.put("boxes", Out::List(boxes))
        .put("trays", Out::List(trays))
        .done()
}

fn link(link: &LinkSettings) -> Out {
    let device = match &link.device {
        Device::Simulated => "simulated",
        Device::Port(path) => path.as_str(),
    };
    Obj::new()
        .text("device", device)
        .whole("baud", link.baud)
        .num("rate_hz", link.rate_hz)
        .done()
}
