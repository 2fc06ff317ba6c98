//! `armwright capture`: the pose the input arm's analog inputs give. Connects to a device,
//! asks for its readings (protocol 3), maps them through the scene's `inputs` and prints every
//! joint's position. It sends no setpoint: nothing moves.

use std::path::Path;
use std::time::{Duration, Instant};

use armwright_link::{
    ChannelValues, Link, SerialTransport, SimDevice, SimDeviceConfig, SimTransport, StreamOptions,
    Transport,
};
use serde_json::{Value, json};

use super::Outcome;
use super::args::SimReadings;
use super::device_sim::readings_source;
use super::report::{fail, load_scene, print_json, problems_json, rounded};
use crate::scene::{InputMap, JointKindDoc, Scene, input_map_of};

/// Readings lines a second asked for while capturing.
const CAPTURE_RATE_HZ: u8 = 20;

/// How long to wait for fresh readings: ten lines' worth at the capture rate, and more than a
/// loaded machine needs to start the device's answer (our choice).
const READINGS_TIMEOUT: Duration = Duration::from_secs(2);

/// The options of one `capture` run.
pub(crate) struct CaptureRequest<'a> {
    /// `--port PATH`.
    pub port: Option<&'a str>,
    /// `--simulated`.
    pub simulated: bool,
    /// `--baud BAUD`.
    pub baud: u32,
    /// `--readings FILE` or `--sweep-inputs N` for the simulated device.
    pub readings: &'a SimReadings,
    /// `--json`.
    pub json: bool,
}

pub(crate) fn run(file: &Path, request: &CaptureRequest) -> Outcome {
    let json = request.json;
    let (scene, _arm) = match load_scene(file, json) {
        Ok(loaded) => loaded,
        Err(outcome) => return outcome,
    };
    let map = match input_map_of(&scene) {
        Ok(map) if !map.is_empty() => map,
        Ok(_) => {
            let message = format!(
                "{} maps no analog input to a joint: add \"inputs\" (see docs/scene-format.md)",
                file.display()
            );
            return fail(json, &message, json!({}), Outcome::Refused);
        }
        Err(problems) => {
            let extra = json!({ "problems": problems_json(&problems) });
            if !json {
                for problem in &problems {
                    eprintln!("  {problem}");
                }
            }
            return fail(
                json,
                "the scene's inputs have problems",
                extra,
                Outcome::Refused,
            );
        }
    };
    let source = match readings_source(request.readings) {
        Ok(source) => source,
        Err(message) => return fail(json, &message, json!({}), Outcome::Unreadable),
    };
    let name = request.port.unwrap_or("simulated device");
    let transport: Box<dyn Transport> = match (request.port, request.simulated, source) {
        (Some(_), _, Some(_)) => {
            let message = "--readings and --sweep-inputs are for the simulated device, not a port";
            return fail(json, message, json!({}), Outcome::Unreadable);
        }
        (Some(path), _, None) => match SerialTransport::open(path, request.baud) {
            Ok(port) => Box::new(port),
            Err(error) => return fail(json, &error.to_string(), json!({}), Outcome::Refused),
        },
        (None, true, Some(source)) => Box::new(SimTransport::with_device(
            SimDevice::new(SimDeviceConfig::default()).with_readings(source),
        )),
        (None, true, None) => {
            let message = "the simulated device needs readings to play: --readings FILE or \
                           --sweep-inputs N";
            return fail(json, message, json!({}), Outcome::Unreadable);
        }
        (None, false, _) => {
            let message = "say which device to read: --port PATH or --simulated";
            return fail(json, message, json!({}), Outcome::Unreadable);
        }
    };
    let readings = match read_once(transport) {
        Ok(readings) => readings,
        Err(message) => {
            let message = format!("{name}: {message}");
            return fail(json, &message, json!({}), Outcome::Refused);
        }
    };
    report(&scene, &map, name, &readings, json)
}

/// Connects, asks for readings, waits for two fresh lines (the first may have been sampled
/// before the request), turns readings off and returns the newest.
fn read_once(transport: Box<dyn Transport>) -> Result<ChannelValues, String> {
    let link = Link::connect(transport, StreamOptions::default())
        .map_err(|error| format!("cannot connect: {error}"))?;
    let before = link.stats().readings_received;
    link.request_readings(CAPTURE_RATE_HZ)
        .map_err(|error| error.to_string())?;
    let give_up = Instant::now() + READINGS_TIMEOUT;
    loop {
        let stats = link.stats();
        if stats.readings_received >= before + 2
            && let Some(readings) = stats.readings
        {
            // Best effort: a device left sending is turned off by the next host's greeting.
            let _ = link.request_readings(0);
            return Ok(readings);
        }
        if Instant::now() >= give_up {
            return Err(format!(
                "no analog readings within {} ms (does the device have analog inputs?)",
                READINGS_TIMEOUT.as_millis()
            ));
        }
        std::thread::sleep(Duration::from_millis(5));
    }
}

fn report(
    scene: &Scene,
    map: &InputMap,
    name: &str,
    readings: &ChannelValues,
    json: bool,
) -> Outcome {
    let joints = &scene.arm.joints;
    let kinds = scene.arm.shape.joint_kinds();
    let poor_fits = crate::input_fit::poor_fit_notes(scene);
    let home: Vec<f64> = joints.iter().map(|joint| joint.home).collect();
    let pose = map.pose(readings.as_slice(), &home);
    let input_of = |joint: usize| {
        map.joints()
            .into_iter()
            .find(|&(mapped, _)| mapped == joint)
            .map(|(_, input)| input)
    };
    let outside: Vec<&str> = joints
        .iter()
        .zip(&pose.joints_deg_or_mm)
        .filter(|(joint, value)| **value < joint.min - 1e-9 || **value > joint.max + 1e-9)
        .map(|(joint, _)| joint.name.as_str())
        .collect();
    let unread: Vec<&str> = pose
        .unread
        .iter()
        .filter_map(|&index| joints.get(index).map(|j| j.name.as_str()))
        .collect();
    let kind = |index: usize| kinds.get(index).copied().unwrap_or(JointKindDoc::Revolute);
    if json {
        let values = |wanted: JointKindDoc| -> Vec<Value> {
            pose.joints_deg_or_mm
                .iter()
                .enumerate()
                .map(|(index, value)| {
                    if kind(index) == wanted {
                        json!(rounded(*value, 3))
                    } else {
                        Value::Null
                    }
                })
                .collect()
        };
        let mut out = json!({
            "ok": outside.is_empty(),
            "device": name,
            "joints": joints.iter().map(|j| j.name.as_str()).collect::<Vec<_>>(),
            "joints_deg": values(JointKindDoc::Revolute),
            "readings": readings.as_slice(),
            "inputs": joints.iter().enumerate().map(|(index, _)| {
                input_of(index).map_or(Value::Null, |input| json!(input))
            }).collect::<Vec<_>>(),
            "outside_limits": outside,
            "unread": unread,
            "poor_fits": problems_json(&poor_fits),
        });
        if kinds.contains(&JointKindDoc::Prismatic) {
            out["joints_mm"] = json!(values(JointKindDoc::Prismatic));
        }
        print_json(&out);
    } else {
        let listed: Vec<String> = readings.as_slice().iter().map(u16::to_string).collect();
        println!(
            "pose from the inputs of {name} (readings {}):",
            listed.join(", ")
        );
        for (index, joint) in joints.iter().enumerate() {
            let unit = match kind(index) {
                JointKindDoc::Revolute => "°",
                JointKindDoc::Prismatic => " mm",
            };
            let value = pose
                .joints_deg_or_mm
                .get(index)
                .copied()
                .unwrap_or(joint.home);
            let whence = match input_of(index) {
                Some(input) if pose.unread.contains(&index) => {
                    format!("input {input} not sent by the device: home")
                }
                Some(input) => format!(
                    "input {input}, reading {}",
                    readings.as_slice().get(input).copied().unwrap_or_default()
                ),
                None => "no input: home".to_owned(),
            };
            println!("  {:<12} {value:>9.2}{unit}  ({whence})", joint.name);
        }
        // Applied all the same, as the editor's form does: the pose above used these fits.
        for note in &poor_fits {
            eprintln!("warning: poor fit: {note}");
        }
        if !outside.is_empty() {
            eprintln!(
                "error: outside its limits: {} (check the inputs' points in the scene)",
                outside.join(", ")
            );
        }
    }
    if outside.is_empty() {
        Outcome::Done
    } else {
        Outcome::Refused
    }
}
