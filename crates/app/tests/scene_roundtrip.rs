//! Properties of the scene file: save → load is the identity on generated valid scenes whose
//! numbers are written to the decimals the field table keeps, a save of any scene rounds each
//! number to those decimals and no further, and no input — arbitrary bytes, arbitrary JSON, or a valid scene with one part replaced by arbitrary
//! JSON — makes the loader panic.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright::scene::*;
use proptest::prelude::*;
use serde_json::Value;

/// Draws numbers from a list of uniform [0, 1) values, so that one proptest input builds a
/// whole scene deterministically. With `decimals` set, every drawn number is rounded to that
/// many places (2 is within what the file keeps for every field but dwell and inertia, 1 place).
struct Draw<'a> {
    values: &'a [f64],
    next: usize,
    decimals: Option<i32>,
}

impl Draw<'_> {
    fn unit(&mut self) -> f64 {
        let value = self.values[self.next % self.values.len()];
        self.next += 1;
        value
    }
    fn range(&mut self, low: f64, high: f64) -> f64 {
        self.range_to(low, high, 2)
    }
    /// A number from `low` to `high`, rounded to at most `places` (when rounding is on).
    fn range_to(&mut self, low: f64, high: f64, places: i32) -> f64 {
        let value = low + (high - low) * self.unit();
        match self.decimals {
            Some(decimals) => {
                let scale = 10f64.powi(decimals.min(places));
                ((value * scale).round() / scale).clamp(low, high)
            }
            None => value,
        }
    }
    fn count(&mut self, low: usize, high: usize) -> usize {
        (low + (self.unit() * (high - low + 1) as f64) as usize).min(high)
    }
    fn flip(&mut self) -> bool {
        self.unit() < 0.5
    }
    fn pulse(&mut self, low: u32, high: u32) -> u32 {
        low + (self.unit() * f64::from(high - low)) as u32
    }
    fn triple(&mut self, low: f64, high: f64) -> [f64; 3] {
        [
            self.range(low, high),
            self.range(low, high),
            self.range(low, high),
        ]
    }
}

fn kind(draw: &mut Draw) -> JointKindDoc {
    if draw.unit() < 0.25 {
        JointKindDoc::Prismatic
    } else {
        JointKindDoc::Revolute
    }
}

fn placement(draw: &mut Draw) -> PlacementDoc {
    PlacementDoc {
        position_mm: draw.triple(-100.0, 100.0),
        rotation_xyz_deg: draw.triple(-180.0, 180.0),
    }
}

fn shape(draw: &mut Draw) -> ArmShape {
    let articulated = |draw: &mut Draw| ArticulatedSize {
        base_height_mm: draw.range(0.0, 150.0),
        upper_arm_mm: draw.range(20.0, 300.0),
        forearm_mm: draw.range(20.0, 300.0),
        wrist_to_tool_mm: draw.range(0.0, 120.0),
    };
    match draw.count(0, 4) {
        0 => ArmShape::Scara(ScaraSize {
            base_height_mm: draw.range(0.0, 200.0),
            upper_arm_mm: draw.range(20.0, 300.0),
            forearm_mm: draw.range(20.0, 300.0),
            tool_drop_mm: draw.range(0.0, 80.0),
        }),
        1 => ArmShape::Articulated4(articulated(draw)),
        2 => ArmShape::Articulated5(articulated(draw)),
        3 => {
            let rows = (0..draw.count(1, 6))
                .map(|_| DhRowDoc {
                    kind: kind(draw),
                    a_mm: draw.range(-200.0, 200.0),
                    alpha_deg: draw.range(-180.0, 180.0),
                    d_mm: draw.range(-200.0, 200.0),
                    theta_deg: draw.range(-180.0, 180.0),
                })
                .collect();
            ArmShape::ChainDh {
                rows,
                tool: placement(draw),
            }
        }
        _ => {
            let axes = (0..draw.count(1, 6))
                .map(|_| AxisDoc {
                    kind: kind(draw),
                    axis: [
                        draw.range(0.1, 1.0),
                        draw.range(-1.0, 1.0),
                        draw.range(-1.0, 1.0),
                    ],
                    origin_mm: draw.triple(-300.0, 300.0),
                })
                .collect();
            ArmShape::ChainOriginAxis {
                axes,
                tool_home: placement(draw),
            }
        }
    }
}

fn joint(draw: &mut Draw, kind: JointKindDoc, index: usize) -> JointDoc {
    let (min, max) = match kind {
        JointKindDoc::Revolute => (-draw.range(1.0, 170.0), draw.range(1.0, 170.0)),
        JointKindDoc::Prismatic => (-draw.range(1.0, 60.0), draw.range(1.0, 60.0)),
    };
    let (low, high) = (draw.pulse(700, 1300), draw.pulse(1700, 2300));
    let (at_min, at_max) = if draw.flip() {
        (low, high)
    } else {
        (high, low)
    };
    JointDoc {
        name: format!("joint {index}"),
        min,
        max,
        home: draw.range(min, max),
        servo: ServoDoc {
            stall_torque_ncm: draw.range(5.0, 300.0),
            no_load_speed_deg_per_s: draw.range(100.0, 600.0),
            deadband_us: draw.range(0.0, 8.0),
            proportional_band: if draw.flip() {
                BandDoc::Us(draw.range(5.0, 80.0))
            } else {
                BandDoc::Deg(draw.range(0.5, 10.0))
            },
            backlash_deg: draw.range(0.0, 2.0),
            mass_g: draw.range(5.0, 80.0),
            mount_offset_mm: draw.triple(-20.0, 20.0),
            pinion_radius_mm: (kind == JointKindDoc::Prismatic).then(|| draw.range(3.0, 20.0)),
        },
        calibration: CalibrationDoc {
            points: [
                CalibrationPoint {
                    position: min,
                    pulse_us: at_min,
                },
                CalibrationPoint {
                    position: max,
                    pulse_us: at_max,
                },
            ],
            pulse_min_us: draw.pulse(500, 700),
            pulse_max_us: draw.pulse(2300, 2500),
            uncertainty: draw.flip().then(|| draw.range(0.0, 3.0)),
        },
        link: LinkMassDoc {
            mass_g: draw.range(0.0, 150.0),
            centre_mm: draw.triple(-100.0, 100.0),
            inertia_g_mm2: draw.flip().then(|| {
                let mut inertia = [0.0; 6];
                for (i, value) in inertia.iter_mut().enumerate() {
                    *value = if i < 3 {
                        draw.range_to(0.0, 5e4, 1)
                    } else {
                        draw.range_to(-1e3, 1e3, 1)
                    };
                }
                inertia
            }),
            radius_mm: draw.flip().then(|| draw.range(2.0, 40.0)),
        },
    }
}

fn scene(values: &[f64], description: String, port: String, rounded: bool) -> Scene {
    let mut draw = Draw {
        values,
        next: 0,
        decimals: rounded.then_some(2),
    };
    let shape = shape(&mut draw);
    let kinds = shape.joint_kinds();
    let joints: Vec<JointDoc> = kinds
        .iter()
        .enumerate()
        .map(|(index, &kind)| joint(&mut draw, kind, index))
        .collect();
    let waypoints = (0..draw.count(0, 4))
        .map(|index| Waypoint {
            name: format!("waypoint {index}"),
            joints_deg_or_mm: joints.iter().map(|j| draw.range(j.min, j.max)).collect(),
            move_kind: if draw.flip() {
                MoveKind::Joint
            } else {
                MoveKind::Straight
            },
            profile: if draw.flip() {
                ProfileKind::Trapezoid
            } else {
                ProfileKind::DoubleS
            },
            speed_share_pct: draw.range(1.0, 100.0),
            dwell_ms: draw.range_to(0.0, 2000.0, 1),
            arrival: if draw.flip() {
                Arrival::Stop
            } else {
                Arrival::PassThrough
            },
            gripper: if draw.flip() {
                GripperState::Open
            } else {
                GripperState::Closed
            },
            placement_tolerance_mm: draw.flip().then(|| draw.range(0.5, 10.0)),
        })
        .collect();
    let open = draw.pulse(900, 1400);
    let gripper = draw.flip().then(|| GripperDoc {
        open_pulse_us: open,
        closed_pulse_us: open + 1 + draw.pulse(0, 900),
    });
    // Some joints with their own limits: velocity, acceleration or both, and sometimes jerk.
    let joint_limits = joints
        .iter()
        .filter_map(|joint| {
            let (velocity, acceleration) = match draw.count(0, 3) {
                0 => return None,
                1 => (Some(draw.range(1.0, 600.0)), None),
                2 => (None, Some(draw.range(1.0, 5000.0))),
                _ => (Some(draw.range(1.0, 600.0)), Some(draw.range(1.0, 5000.0))),
            };
            let jerk = draw.flip().then(|| draw.range_to(100.0, 500_000.0, 1));
            Some(JointLimitDoc {
                joint: joint.name.clone(),
                max_velocity_deg_or_mm_per_s: velocity,
                max_acceleration_deg_or_mm_per_s2: acceleration,
                max_jerk_deg_or_mm_per_s3: jerk,
            })
        })
        .collect();
    // Up to one input per joint, on distinct inputs, each with 2 to 5 points.
    let mut inputs = Vec::new();
    for (index, joint) in joints.iter().enumerate() {
        if draw.unit() >= 0.3 {
            continue;
        }
        let mut points = Vec::new();
        for point in 0..draw.count(2, 5) {
            points.push(InputPointDoc {
                reading: 800 * point as u32 + draw.pulse(0, 700),
                position: draw.range(-90.0, 90.0),
            });
        }
        inputs.push(InputDoc {
            input: index as u32,
            joint: joint.name.clone(),
            points,
        });
    }
    Scene {
        description,
        arm: ArmDoc {
            shape,
            joints,
            tool: ToolMassDoc {
                mass_g: draw.range(0.0, 100.0),
                centre_mm: draw.triple(-30.0, 30.0),
            },
            payload_g: draw.range(0.0, 200.0),
            gripper,
        },
        waypoints,
        timing: Timing {
            torque_derating_pct: draw.range(10.0, 100.0),
            settle_band_mm: draw.range(0.05, 5.0),
            max_overshoot_mm: draw.range(0.05, 5.0),
            damping_ratio: draw.range(0.1, 1.5),
            approach_speed_share_pct: draw.range(1.0, 100.0),
            wake_pause_ms: draw.range_to(0.0, 5000.0, 1),
            shaping: [Shaping::None, Shaping::Zv, Shaping::Zvd][draw.count(0, 2)],
            joint_limits,
        },
        workspace: Workspace {
            table_height_mm: draw.flip().then(|| draw.range(-50.0, 50.0)),
            boxes: (0..draw.count(0, 2))
                .map(|i| BoxDoc {
                    name: format!("box {i}"),
                    position_mm: draw.triple(-300.0, 300.0),
                    size_mm: draw.triple(1.0, 100.0),
                })
                .collect(),
            trays: (0..draw.count(0, 2))
                .map(|i| TrayDoc {
                    name: format!("tray {i}"),
                    position_mm: draw.triple(-300.0, 300.0),
                    size_mm: draw.triple(1.0, 100.0),
                    pockets: [draw.pulse(1, 9), draw.pulse(1, 9)],
                })
                .collect(),
        },
        link: LinkSettings {
            device: if port.is_empty() {
                Device::Simulated
            } else {
                Device::Port(port)
            },
            baud: draw.pulse(1200, 1_000_000),
            rate_hz: draw.range(50.0, 500.0),
        },
        inputs,
    }
}

fn any_json() -> impl Strategy<Value = Value> {
    let leaf = prop_oneof![
        Just(Value::Null),
        any::<bool>().prop_map(Value::Bool),
        any::<i64>().prop_map(Value::from),
        any::<f64>().prop_map(Value::from),
        "\\PC{0,12}".prop_map(Value::String),
        prop_oneof![
            Just("format"),
            Just("version"),
            Just("arm"),
            Just("joints"),
            Just("type"),
            Just("scara"),
            Just("chain"),
            Just("armwright-scene"),
            Just("servo"),
            Just("us")
        ]
        .prop_map(|s| Value::String(s.into())),
    ];
    leaf.prop_recursive(4, 48, 6, |inner| {
        prop_oneof![
            prop::collection::vec(inner.clone(), 0..6).prop_map(Value::Array),
            prop::collection::vec(("[a-z_]{1,10}", inner), 0..6)
                .prop_map(|entries| Value::Object(entries.into_iter().collect())),
        ]
    })
}

/// Every node of `value` as a JSON pointer.
fn pointers(value: &Value, at: String, out: &mut Vec<String>) {
    match value {
        Value::Object(map) => {
            for (key, child) in map {
                pointers(child, format!("{at}/{key}"), out);
            }
        }
        Value::Array(items) => {
            for (index, child) in items.iter().enumerate() {
                pointers(child, format!("{at}/{index}"), out);
            }
        }
        _ => {}
    }
    out.push(at);
}

/// `arm.joints[2].servo` → ["arm", "joints", "2", "servo"].
fn path_steps(path: &str) -> Vec<String> {
    path.split('.')
        .filter(|part| !part.is_empty())
        .flat_map(|part| {
            let mut pieces = part.split('[');
            let head = pieces.next().unwrap_or("").to_string();
            std::iter::once(head).chain(pieces.map(|index| index.trim_end_matches(']').to_string()))
        })
        .collect()
}

fn to_pointer(steps: &[String]) -> String {
    steps.iter().map(|step| format!("/{step}")).collect()
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(256))]

    #[test]
    fn save_then_load_is_the_identity(
        values in prop::collection::vec(0.0f64..1.0, 64..256),
        description in "\\PC{0,40}",
        port in prop_oneof![Just(String::new()), "/dev/tty[A-Z]{3}[0-9]".prop_map(String::from)],
    ) {
        let scene = scene(&values, description, port, true);
        prop_assert_eq!(validate(&scene), Vec::new());
        let text = to_json(&scene);
        let loaded = load_bytes(text.as_bytes());
        prop_assert!(loaded.is_ok(), "{:?}\n{}", loaded, text);
        prop_assert_eq!(loaded.unwrap(), scene.clone());
        let dir = common::scratch_dir("roundtrip-file");
        let path = dir.join("generated.armwright.json");
        save(&scene, &path).unwrap();
        prop_assert_eq!(load(&path).unwrap(), scene);
        std::fs::remove_dir_all(dir).unwrap();
    }

    #[test]
    fn a_save_rounds_each_number_to_its_decimals_and_no_further(
        values in prop::collection::vec(0.0f64..1.0, 64..256),
    ) {
        let scene = scene(&values, "any precision".into(), String::new(), false);
        let text = to_json(&scene);
        let loaded = load_bytes(text.as_bytes());
        prop_assert!(loaded.is_ok(), "{:?}\n{}", loaded, text);
        let loaded = loaded.unwrap();
        // Saving what was loaded writes the same text: the rounding is done once.
        prop_assert_eq!(to_json(&loaded), text.clone());
        // No number is written with more places than its field keeps (lengths 3, angles 4).
        for line in text.lines() {
            let places = line
                .trim_end_matches(',')
                .rsplit_once('.')
                .filter(|(_, tail)| tail.chars().all(|c| c.is_ascii_digit()))
                .map_or(0, |(_, tail)| tail.len());
            prop_assert!(places <= 6, "{}", line);
        }
        // Each value moved by at most half a unit in its last kept place.
        let close = |a: f64, b: f64, decimals: i32| (a - b).abs() <= 0.5 * 10f64.powi(-decimals) + 1e-12;
        prop_assert!(close(loaded.timing.settle_band_mm, scene.timing.settle_band_mm, 3));
        prop_assert!(close(loaded.arm.payload_g, scene.arm.payload_g, 2));
        for (a, b) in loaded.arm.joints.iter().zip(&scene.arm.joints) {
            prop_assert!(close(a.servo.stall_torque_ncm, b.servo.stall_torque_ncm, 2));
            prop_assert!(close(a.servo.backlash_deg, b.servo.backlash_deg, 4));
            prop_assert!(close(a.min, b.min, 4));
        }
    }

    #[test]
    fn arbitrary_bytes_never_panic(bytes in prop::collection::vec(any::<u8>(), 0..512)) {
        let _ = load_bytes(&bytes);
    }

    #[test]
    fn arbitrary_json_never_panics(value in any_json()) {
        let _ = load_bytes(value.to_string().as_bytes());
        // The same JSON under a valid header reaches the decoder.
        let mut document = serde_json::json!({ "format": "armwright-scene", "version": 1 });
        if let Value::Object(map) = &value {
            for (key, entry) in map {
                document[key] = entry.clone();
            }
        }
        document["arm"] = value;
        let _ = load_bytes(document.to_string().as_bytes());
    }

    #[test]
    fn a_valid_scene_with_one_part_replaced_never_panics(
        which in any::<prop::sample::Index>(),
        replacement in any_json(),
        use_scara in any::<bool>(),
    ) {
        let mut document = if use_scara { common::scara() } else { common::articulated5() };
        let mut all = Vec::new();
        pointers(&document, String::new(), &mut all);
        let pointer = which.get(&all).clone();
        if let Some(node) = document.pointer_mut(&pointer) {
            *node = replacement;
        }
        // Every problem names a place in the document: the field itself, or for a missing
        // field, the object it is missing from.
        if let Err(SceneError::Problems { problems }) = load_bytes(document.to_string().as_bytes()) {
            prop_assert!(!problems.is_empty());
            for problem in problems {
                let steps = path_steps(&problem.path);
                let found = document.pointer(&to_pointer(&steps)).is_some()
                    || document.pointer(&to_pointer(&steps[..steps.len().saturating_sub(1)])).is_some();
                prop_assert!(found, "{} names no place in {}", problem.path, document);
            }
        }
    }
}
