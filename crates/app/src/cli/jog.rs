//! `armwright jog`: move the connected arm from a terminal, one typed command a line, through
//! the same follow run as the editor's Follow (`follow_run.rs`): a joint by degrees (or mm),
//! the tool point by mm along x, y or z through inverse kinematics, at a speed share; the pose
//! is printed as each move comes to rest. `stop` (or Ctrl-C) sends the emergency stop at once,
//! whatever is queued; `quit` (or the end of input) brings the arm to rest and the device holds.
//!
//! Lines are read on their own thread. A stop is acted on as it is read; every other command
//! waits until the move before it has come to rest, so a typed script runs in order.

use std::io::{BufRead, IsTerminal};
use std::path::Path;
use std::sync::mpsc::{Receiver, RecvTimeoutError, channel};
use std::time::Duration;

use armwright_kinematics::{Arm, IkOptions, IkTarget, JointKind, solve_ik, tool_pose};
use armwright_link::{
    EmergencyStop, Link, LinkEvent, SerialTransport, SimDevice, SimDeviceConfig, SimTransport,
    StreamOptions, Transport,
};

use super::Outcome;
use super::report::load_scene;
use super::stream::{CAUTION, confirm};
use crate::follow_run::{FollowEnd, FollowRun, follow_joints};
use crate::scene::{Device, Scene, pose_from_file_units, pose_to_file_units};
use crate::task::servo_model_of;

/// The command words, as `help` prints them.
pub(crate) const JOG_HELP: &str = "\
commands, one a line:
  j JOINT STEP   turn (or slide) a joint by STEP degrees (mm), e.g. `j 2 -5` or `j elbow 10`
  t AXIS STEP    move the tool point STEP mm along x, y or z, e.g. `t z 20`
  share PCT      the speed share, 1 to 100 %
  show           print the pose
  stop           emergency stop now (also Ctrl-C); the device holds until reset
  quit           bring the arm to rest and hold, then end (also the end of input)";

/// A revolute joint turning more than this in one tool-point step counts as a jump to another
/// branch, rad (60°, as the editor's drag).
const BRANCH_JUMP: f64 = std::f64::consts::FRAC_PI_3;

/// A sliding joint moving more than this in one step counts as a jump, m.
const SLIDE_JUMP: f64 = 0.05;

/// The options of one `jog` run.
pub(crate) struct JogRequest<'a> {
    /// `--port PATH`.
    pub port: Option<&'a str>,
    /// `--simulated`.
    pub simulated: bool,
    /// `--share PCT`.
    pub share_pct: f64,
    /// `--yes`: no confirmation asked.
    pub yes: bool,
}

/// One typed line.
#[derive(Debug, Clone, PartialEq)]
enum Typed {
    /// A joint (index) by a step in file units (degrees or mm).
    Joint(usize, f64),
    /// The tool point along an axis (0 x, 1 y, 2 z) by mm.
    Tool(usize, f64),
    /// A speed share, %.
    Share(f64),
    Show,
    Help,
    Quit,
}

pub(crate) fn run(file: &Path, request: &JogRequest) -> Outcome {
    let (scene, arm) = match load_scene(file, false) {
        Ok(loaded) => loaded,
        Err(outcome) => return outcome,
    };
    if !(1.0..=100.0).contains(&request.share_pct) {
        eprintln!(
            "armwright: --share {} is outside 1 to 100 %",
            request.share_pct
        );
        return Outcome::Unreadable;
    }
    let simulated = match (request.port, request.simulated) {
        (Some(_), _) => false,
        (None, true) => true,
        (None, false) => scene.link.device == Device::Simulated,
    };
    let name = match (request.port, &scene.link.device) {
        (Some(path), _) => path.to_owned(),
        (None, _) if simulated => "simulated".to_owned(),
        (None, Device::Port(path)) => path.clone(),
        (None, Device::Simulated) => "simulated".to_owned(),
    };
    eprintln!("{CAUTION}");
    eprintln!("A limp servo runs to its first pulse at its own top speed when jogging starts.");
    let lines = read_lines();
    if !request.yes {
        eprint!("Type yes to jog the arm on {name}: ");
        let answer = match lines.recv() {
            Ok(line) => confirm(&mut line.as_bytes()),
            Err(_) => Err("no confirmation: standard input is closed".to_owned()),
        };
        if !std::io::stdin().is_terminal() {
            eprintln!();
        }
        if let Err(reason) = answer {
            eprintln!("armwright: {reason}; nothing was sent");
            return Outcome::Refused;
        }
    }
    let start = start_pose(&scene, &arm);
    let link = match connect(&scene, &arm, simulated, &name, &start) {
        Ok(link) => link,
        Err(message) => {
            eprintln!("armwright: {message}");
            return Outcome::Refused;
        }
    };
    let joints = match follow_joints(&scene, &arm, &start) {
        Ok(joints) => joints,
        Err(message) => {
            eprintln!("armwright: {message}");
            return Outcome::Refused;
        }
    };
    let stop = link.emergency_stop();
    let handler_stop = stop.clone();
    if let Err(error) = ctrlc::set_handler(move || handler_stop.trigger()) {
        eprintln!("armwright: cannot catch Ctrl-C, so it could not stop the arm: {error}");
        return Outcome::Refused;
    }
    let (mut run, note) = match FollowRun::start(
        &link,
        arm.clone(),
        &joints,
        request.share_pct / 100.0,
        &start,
        false,
        scene.link.rate_hz,
    ) {
        Ok(started) => started,
        Err(message) => {
            eprintln!("armwright: {message}");
            return Outcome::Refused;
        }
    };
    if let Some(note) = note {
        eprintln!("{note}");
    }
    eprintln!(
        "jogging on {name} at {} %; `help` lists the commands, `stop` or Ctrl-C stops",
        request.share_pct
    );
    let mut jog = Jog {
        scene: &scene,
        arm: &arm,
        target: run.positions().to_vec(),
        moving: false,
    };
    jog.show("at", run.positions());
    let ending = jog.drive(&link, &mut run, &lines, &stop);
    finish(&link, ending)
}

/// Where the arm is taken to be when the device cannot say: the first waypoint, else home.
fn start_pose(scene: &Scene, arm: &Arm) -> Vec<f64> {
    scene
        .waypoints
        .first()
        .filter(|waypoint| waypoint.joints_deg_or_mm.len() == arm.joint_count())
        .map_or_else(
            || arm.home_pose(),
            |waypoint| pose_from_file_units(&scene.arm, &waypoint.joints_deg_or_mm),
        )
}

fn connect(
    scene: &Scene,
    arm: &Arm,
    simulated: bool,
    name: &str,
    start: &[f64],
) -> Result<Link, String> {
    let transport: Box<dyn Transport> = if simulated {
        // The simulated device moves the arm's servo model, as in the editor.
        let device = SimDevice::new(SimDeviceConfig::default())
            .with_arm(arm.clone(), &servo_model_of(scene), start)
            .map_err(|error| format!("the simulated device cannot move this arm: {error}"))?;
        Box::new(SimTransport::with_device(device))
    } else {
        Box::new(
            SerialTransport::open(name, scene.link.baud)
                .map_err(|error| format!("cannot open {name}: {error}"))?,
        )
    };
    let options = StreamOptions {
        period: Duration::from_secs_f64(1.0 / scene.link.rate_hz.clamp(1.0, 1000.0)),
        queue_capacity: 8,
        ..StreamOptions::default()
    };
    Link::connect(transport, options).map_err(|error| format!("cannot connect to {name}: {error}"))
}

/// Standard input's lines, read on their own thread; a stop word is not in it (see `drive`).
fn read_lines() -> Receiver<String> {
    let (sender, lines) = channel();
    let _ = std::thread::Builder::new()
        .name("armwright jog input".into())
        .spawn(move || {
            for line in std::io::stdin().lock().lines() {
                let Ok(line) = line else { return };
                if sender.send(line).is_err() {
                    return;
                }
            }
        });
    lines
}

/// The jog session's state around the follow run.
struct Jog<'a> {
    scene: &'a Scene,
    arm: &'a Arm,
    /// The pose the arm is sent to (rad or m).
    target: Vec<f64>,
    /// A move is under way: print the pose when it comes to rest.
    moving: bool,
}

impl Jog<'_> {
    /// Steps the follow run and takes typed commands until the run ends.
    fn drive(
        &mut self,
        link: &Link,
        run: &mut FollowRun,
        lines: &Receiver<String>,
        stop: &EmergencyStop,
    ) -> FollowEnd {
        let mut queued: std::collections::VecDeque<String> = std::collections::VecDeque::new();
        let mut input_open = true;
        let mut leaving = false;
        loop {
            if let Some(end) = run.step(link) {
                return end;
            }
            if self.moving && run.at_rest() {
                self.moving = false;
                self.show("at", run.positions());
            }
            // Take every line waiting; a stop acts now, the rest wait their turn.
            let mut wait = run.wait();
            while input_open {
                match lines.recv_timeout(wait) {
                    Ok(line) => {
                        let word = line.trim().to_ascii_lowercase();
                        if word == "stop" || word == "s" {
                            stop.trigger();
                            eprintln!("emergency stop sent");
                        } else {
                            queued.push_back(line);
                        }
                        wait = Duration::ZERO;
                    }
                    Err(RecvTimeoutError::Timeout) => break,
                    Err(RecvTimeoutError::Disconnected) => input_open = false,
                }
            }
            if !input_open {
                // No input to wait on: pace the loop by the run's own step.
                std::thread::sleep(wait);
            }
            if leaving || !run.at_rest() || self.moving {
                continue;
            }
            match queued.pop_front() {
                Some(line) => match parse(&line, self.scene) {
                    Ok(Typed::Quit) => {
                        run.leave();
                        leaving = true;
                    }
                    Ok(typed) => self.obey(run, typed),
                    Err(message) => eprintln!("{message}"),
                },
                None if !input_open => {
                    run.leave();
                    leaving = true;
                }
                None => {}
            }
        }
    }

    /// Carries out one command other than quit.
    fn obey(&mut self, run: &mut FollowRun, typed: Typed) {
        let outcome = match typed {
            Typed::Joint(joint, step) => {
                let mut values = pose_to_file_units(&self.scene.arm, &self.target);
                values[joint] += step;
                let mut wanted = pose_from_file_units(&self.scene.arm, &values);
                let spec = &self.arm.joints()[joint];
                wanted[joint] = wanted[joint].clamp(spec.min, spec.max);
                Ok(wanted)
            }
            Typed::Tool(axis, step_mm) => self.tool_step(axis, step_mm),
            Typed::Share(pct) => {
                if let Err(message) = run.set_share(pct / 100.0) {
                    eprintln!("{message}");
                } else {
                    println!("speed share {pct} %");
                }
                return;
            }
            Typed::Show => {
                self.show("at", run.positions());
                return;
            }
            Typed::Help => {
                println!("{JOG_HELP}");
                return;
            }
            Typed::Quit => return,
        };
        match outcome.and_then(|wanted| run.set_target(&wanted, false).map(|()| wanted)) {
            Ok(wanted) => {
                self.target = wanted;
                self.moving = true;
            }
            Err(message) => eprintln!("{message}"),
        }
    }

    /// The pose that moves the tool point `step_mm` along `axis`, through inverse kinematics
    /// near the pose sent, keeping the tool angle, as the editor's drag does.
    fn tool_step(&self, axis: usize, step_mm: f64) -> Result<Vec<f64>, String> {
        let mut target = IkTarget::of_pose(self.arm, &self.target)
            .map_err(|error| format!("cannot move the tool point: {error}"))?;
        target.position[axis] += step_mm * 1e-3;
        let solutions = solve_ik(self.arm, &target, &self.target, &IkOptions::default())
            .map_err(|error| format!("cannot move the tool point there: {error}"))?;
        let nearest = solutions.nearest(&self.target).positions().to_vec();
        let jumps = self
            .arm
            .joints()
            .iter()
            .zip(nearest.iter().zip(&self.target))
            .any(|(joint, (to, from))| {
                let limit = match joint.kind {
                    JointKind::Revolute => BRANCH_JUMP,
                    JointKind::Prismatic => SLIDE_JUMP,
                };
                (to - from).abs() > limit
            });
        if jumps {
            return Err(
                "cannot move the tool point there without jumping to another branch".into(),
            );
        }
        Ok(nearest)
    }

    /// Prints the pose: each joint in degrees or mm, and the tool point in mm.
    fn show(&self, word: &str, pose: &[f64]) {
        let values = pose_to_file_units(&self.scene.arm, pose);
        let joints: Vec<String> = self
            .scene
            .arm
            .joints
            .iter()
            .zip(&values)
            .enumerate()
            .map(|(index, (joint, value))| {
                let unit = if self.arm.joints()[index].kind == JointKind::Prismatic {
                    " mm"
                } else {
                    "°"
                };
                format!("{} {value:.1}{unit}", joint.name)
            })
            .collect();
        let tool = tool_pose(self.arm, pose).map_or_else(
            |_| String::new(),
            |tool| {
                let p = tool.translation.vector * 1e3;
                format!("; tool point x {:.1} y {:.1} z {:.1} mm", p.x, p.y, p.z)
            },
        );
        println!("{word} {}{tool}", joints.join(", "));
    }
}

/// Reads one command line.
fn parse(line: &str, scene: &Scene) -> Result<Typed, String> {
    let words: Vec<&str> = line.split_whitespace().collect();
    let number = |word: &str, what: &str| -> Result<f64, String> {
        word.parse::<f64>()
            .ok()
            .filter(|value| value.is_finite())
            .ok_or_else(|| format!("{what} \"{word}\" is not a number; `help` lists the commands"))
    };
    match words.as_slice() {
        [] => Err("an empty line; `help` lists the commands".into()),
        ["j", joint, step] => {
            let index = scene
                .arm
                .joints
                .iter()
                .position(|spec| spec.name.eq_ignore_ascii_case(joint))
                .or_else(|| {
                    joint
                        .parse::<usize>()
                        .ok()
                        .filter(|n| (1..=scene.arm.joints.len()).contains(n))
                        .map(|n| n - 1)
                })
                .ok_or_else(|| {
                    let names: Vec<&str> =
                        scene.arm.joints.iter().map(|j| j.name.as_str()).collect();
                    format!(
                        "no joint \"{joint}\": give 1 to {} or a name ({})",
                        names.len(),
                        names.join(", ")
                    )
                })?;
            Ok(Typed::Joint(index, number(step, "step")?))
        }
        ["t", axis, step] => {
            let axis = match axis.to_ascii_lowercase().as_str() {
                "x" => 0,
                "y" => 1,
                "z" => 2,
                other => return Err(format!("axis \"{other}\": give x, y or z")),
            };
            Ok(Typed::Tool(axis, number(step, "step")?))
        }
        ["share", pct] => {
            let pct = number(pct, "share")?;
            if (1.0..=100.0).contains(&pct) {
                Ok(Typed::Share(pct))
            } else {
                Err(format!("share {pct} is outside 1 to 100 %"))
            }
        }
        ["show"] => Ok(Typed::Show),
        ["help"] => Ok(Typed::Help),
        ["quit"] | ["q"] => Ok(Typed::Quit),
        _ => Err(format!(
            "\"{}\" is not a command; `help` lists them",
            line.trim()
        )),
    }
}

/// Reports how the run ended and waits for the device's word on a stop.
fn finish(link: &Link, ending: FollowEnd) -> Outcome {
    match ending {
        FollowEnd::Left => {
            println!("the arm came to rest; the device holds");
            Outcome::Done
        }
        FollowEnd::Stopped => {
            // The device's acknowledgement, if it has not come yet.
            let deadline = std::time::Instant::now() + Duration::from_secs(2);
            while std::time::Instant::now() < deadline {
                match link.next_event(Duration::from_millis(50)) {
                    Some(LinkEvent::StopConfirmed { after }) => {
                        println!(
                            "the device confirmed the emergency stop after {:.1} ms; it holds \
                             until reset",
                            after.as_secs_f64() * 1e3
                        );
                        break;
                    }
                    Some(_) => {}
                    None if link.stats().stop_ack_latency.is_some() => {
                        println!("the device confirmed the emergency stop; it holds until reset");
                        break;
                    }
                    None => {}
                }
            }
            eprintln!("armwright: jogging ended by the emergency stop");
            Outcome::Refused
        }
        FollowEnd::Lost(why) => {
            eprintln!("armwright: link lost: {why}");
            Outcome::Refused
        }
        FollowEnd::Failed(why) => {
            eprintln!("armwright: jogging ended: {why}");
            Outcome::Refused
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn commands_read_as_documented_and_bad_ones_say_why() {
        // The pen-plotter sample: the scene the editor opens when given no file.
        let path = armwright_test_support::samples::sample_scene("pen-plotter");
        let scene = crate::scene::load(&path).expect("sample loads");
        let first = scene.arm.joints[0].name.clone();
        assert_eq!(parse("j 2 -5", &scene), Ok(Typed::Joint(1, -5.0)));
        assert_eq!(
            parse(&format!("j {first} 10"), &scene),
            Ok(Typed::Joint(0, 10.0))
        );
        assert_eq!(parse("t z 20", &scene), Ok(Typed::Tool(2, 20.0)));
        assert_eq!(parse("share 25", &scene), Ok(Typed::Share(25.0)));
        assert_eq!(parse("quit", &scene), Ok(Typed::Quit));
        assert!(parse("j 99 1", &scene).unwrap_err().contains("no joint"));
        assert!(parse("t w 1", &scene).unwrap_err().contains("x, y or z"));
        assert!(parse("share 0", &scene).unwrap_err().contains("outside"));
        assert!(parse("fly", &scene).unwrap_err().contains("help"));
    }
}
