//! The command line's options, declared once with clap's derive. A doc comment's first paragraph
//! is the `-h` line and the whole comment is `--help`; value names carry units.

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

/// Describe, check and program small hobby-servo arms.
///
/// Most subcommands read a scene file (`*.armwright.json`); `ports` and `device-sim` need none.
/// Exit status: 0 on success, 1 when the scene has problems, a target cannot be reached or met,
/// or a stream ends early; 2 when the input cannot be read.
///
/// With no arguments, or `armwright edit [FILE]`, the desktop editor opens instead (on the
/// bundled pen-plotter sample when no file is given).
#[derive(Debug, Parser)]
#[command(name = "armwright", version)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Check a scene file and list every problem with its JSON path.
    ///
    /// With --json the arm is described too: each joint's kind, limits, axis (a unit vector) and
    /// a point on it with every joint at zero, and the tool point there, all in the base frame in
    /// mm: enough to recompute the forward kinematics by the product of exponentials.
    Check {
        /// The scene file.
        #[arg(value_name = "FILE")]
        file: PathBuf,
        /// Print machine-readable JSON (keys carry units) instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Where the tool point is for given joint positions, the torque gravity and the payload
    /// need, and how accurately the tool point can be placed.
    ///
    /// Tool angles are those `reach --to` takes back: for the articulated arms the pitch (and
    /// roll) in the vertical plane through the base axis and the tool point, and the yaw of that
    /// plane; for the horizontal arm the tool yaw. Torque is the holding torque against gravity
    /// with the payload, at each servo's output, and its share of the servo's stall torque times
    /// the scene's torque derating.
    Pose {
        /// The scene file.
        #[arg(value_name = "FILE")]
        file: PathBuf,
        /// Joint positions, base first, comma-separated: degrees for a revolute joint, mm for a
        /// prismatic one (negative values are fine: --joints=-10,20,...).
        #[arg(
            long,
            value_name = "DEG_OR_MM,...",
            value_delimiter = ',',
            allow_hyphen_values = true,
            required = true
        )]
        joints: Vec<f64>,
        /// Print machine-readable JSON (keys carry units) instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Every set of joint positions that puts the tool point on a target.
    ///
    /// ANGLE is the tool pitch for the articulated arms and the tool yaw for the horizontal
    /// arm; ROLL is the wrist roll of the 5-joint arm. An angle not given is free: it is searched
    /// over a whole turn for solutions within the limits, each branch keeping the one nearest
    /// --near (or the home pose); a free roll keeps the roll joint where --near has it.
    Reach {
        /// The scene file.
        #[arg(value_name = "FILE")]
        file: PathBuf,
        /// Target: X,Y,Z in mm in the base frame, then optionally ANGLE and ROLL in degrees.
        #[arg(
            long,
            value_name = "X_MM,Y_MM,Z_MM[,ANGLE_DEG[,ROLL_DEG]]",
            value_delimiter = ',',
            allow_hyphen_values = true,
            required = true,
            num_args = 1
        )]
        to: Vec<f64>,
        /// The pose to stay near (degrees or mm per joint); the home pose when not given.
        #[arg(
            long,
            value_name = "DEG_OR_MM,...",
            value_delimiter = ',',
            allow_hyphen_values = true
        )]
        near: Option<Vec<f64>>,
        /// Print machine-readable JSON (keys carry units) instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Map where the tool point can reach and how much torque holding it there takes.
    ///
    /// The top view is a horizontal plane at height --at (mm, default: the tool point's height
    /// in the home pose); the side view is the vertical plane through the base axis at yaw --at
    /// (degrees, default 0).
    Envelope {
        /// The scene file.
        #[arg(value_name = "FILE")]
        file: PathBuf,
        /// Which plane to map.
        #[arg(long, value_enum)]
        view: View,
        /// Height of the top view in mm, or yaw of the side view in degrees.
        #[arg(long, value_name = "MM|DEG", allow_hyphen_values = true)]
        at: Option<f64>,
        /// Cells along each side of the square map.
        #[arg(long, value_name = "N", default_value_t = 200)]
        cells: usize,
        /// Print machine-readable JSON (keys carry units) instead of text.
        #[arg(long)]
        json: bool,
        /// Also write the map as an SVG picture to this file.
        #[arg(long, value_name = "OUT.svg")]
        svg: Option<PathBuf>,
    },
    /// The timed sequence: cycle time, every move and dwell, and each servo's peak torque use.
    ///
    /// Straight moves are planned through inverse kinematics along the line. With --csv the
    /// setpoints are written as CSV: a header, then one row per sample with the time in s and
    /// each joint in degrees (mm for a prismatic joint).
    Plan {
        /// The scene file.
        #[arg(value_name = "FILE")]
        file: PathBuf,
        /// Setpoints per second in the CSV, 50 to 1000.
        #[arg(long, value_name = "HZ", default_value_t = 100.0)]
        rate: f64,
        /// Write the setpoints to this CSV file.
        #[arg(long, value_name = "OUT.csv")]
        csv: Option<PathBuf>,
        /// Print machine-readable JSON (keys carry units) instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Dry run: how the servos will follow the plan, before anything is powered.
    ///
    /// Each joint's servo is modelled (deadband, proportional band, torque-speed line, damping,
    /// friction, backlash, the inertia and gravity load of the arm beyond it, pulses held for
    /// a 20 ms frame). Per waypoint: overshoot and settle time (against where the arm comes to
    /// rest), the resting error from the target, the following error and the peak torque use.
    Simulate {
        /// The scene file.
        #[arg(value_name = "FILE")]
        file: PathBuf,
        /// Print machine-readable JSON (keys carry units) instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Find the fastest timing whose dry run keeps every stop's overshoot under a target.
    ///
    /// Speed shares are searched per move and dwells set from the predicted settle times; the
    /// report compares cycle time, worst overshoot and worst torque use before and after. Exit
    /// status 1 when the target cannot be met, naming the waypoint.
    Retime {
        /// The scene file.
        #[arg(value_name = "FILE")]
        file: PathBuf,
        /// Largest allowed overshoot of the tool point at any stop, in millimetres.
        #[arg(long = "max-overshoot", value_name = "MM", help_heading = "Limits")]
        max_overshoot: f64,
        /// Share of each servo's stall torque the run may use, above 0 and at most 1 (default:
        /// the scene's torque derating).
        #[arg(long = "torque-share", value_name = "SHARE", help_heading = "Limits")]
        torque_share: Option<f64>,
        /// Shortest dwell at a stop, in milliseconds.
        #[arg(
            long = "min-dwell",
            value_name = "MS",
            default_value_t = 0.0,
            help_heading = "Limits"
        )]
        min_dwell: f64,
        /// Save the retimed scene here (atomically; the input is replaced only if named).
        #[arg(long, value_name = "OUT.armwright.json")]
        write: Option<PathBuf>,
        /// Print machine-readable JSON (keys carry units) instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Fit a joint's calibration to measured points: pulse widths sent, positions read.
    ///
    /// Each point is PULSE_US:POSITION, the pulse width in whole µs and the position read off a
    /// protractor (degrees) or a rule (mm, for a prismatic joint) while that pulse was held. The
    /// fit is least squares of position on pulse: a straight line, or a quadratic when four or
    /// more points bow clearly (its term three standard errors clear of zero and bowing at
    /// least 0.25° or 0.5 mm). Reports µs per degree (or mm), the pulse at zero, the residuals
    /// and, for a quadratic, its term. --write saves the scene with the straight-line fit
    /// through the measured pulse range as the joint's calibration.
    ///
    /// With --port or --simulated instead of --points, the joint is stepped on the device from
    /// the terminal after the safety caution and a typed "yes" (unless --yes): type +N or -N to
    /// step the pulse by N µs, the position you read to record a point, done to fit. The other
    /// channels keep what the device sends (a limp one gets the scene's home pose). Ctrl-C sends
    /// the emergency stop.
    Calibrate {
        /// The scene file.
        #[arg(value_name = "FILE")]
        file: PathBuf,
        /// The joint's name in the scene, for example "shoulder".
        #[arg(long, value_name = "NAME")]
        joint: String,
        /// Measured points, at least two, comma-separated: 1000:-44.5,1500:0.5,2000:45.
        #[arg(
            long,
            value_name = "PULSE_US:POSITION,...",
            value_delimiter = ',',
            allow_hyphen_values = true,
            required_unless_present_any = ["port", "simulated"],
            conflicts_with_all = ["port", "simulated"],
            value_parser = super::calibrate::parse_measured_point
        )]
        points: Vec<super::calibrate::MeasuredPoint>,
        /// Step the joint on the device at this serial port, for example /dev/ttyUSB0.
        #[arg(long, value_name = "PATH", conflicts_with = "simulated")]
        port: Option<String>,
        /// Step the joint on the built-in simulated device, which moves the scene's arm and
        /// says where the joint came to rest.
        #[arg(long)]
        simulated: bool,
        /// Step without the typed confirmation (the caution is still shown).
        #[arg(long)]
        yes: bool,
        /// Save the scene with the fitted calibration here (atomically).
        #[arg(long, value_name = "OUT.armwright.json")]
        write: Option<PathBuf>,
        /// Print machine-readable JSON (keys carry units) instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Write a printable protractor (an SVG page in mm) for reading calibration angles.
    ///
    /// Print it at 100 % (actual size) and check its 100 mm bar with a rule before trusting a
    /// reading. 0° is to the right and angles grow counter-clockwise, as a joint turns for a
    /// positive angle when its axis points at you. Without --out the SVG goes to standard
    /// output.
    Protractor {
        /// Write the SVG to this file (atomically) instead of standard output.
        #[arg(long, value_name = "OUT.svg")]
        out: Option<PathBuf>,
    },
    /// List the serial ports of this computer, with USB vendor and product ids.
    Ports {
        /// Print machine-readable JSON instead of text.
        #[arg(long)]
        json: bool,
    },
    /// Stream the scene's sequence to a device as pulse widths, in real time.
    ///
    /// The sequence is planned and sampled at --rate; each sample becomes one pulse width per
    /// channel through the joints' calibration (the gripper from its waypoint's state). It
    /// starts with a slow approach (timing.approach_speed_share_pct) from the pulses the device
    /// reports to the first waypoint; when a servo is limp (its position unknown) the arm is
    /// first woken at its rest pose (each joint's home) and held there for timing.wake_pause_ms.
    /// The device is --port, --simulated, or else the scene's link device. The safety caution is
    /// shown and a typed "yes" is needed unless --yes. Ctrl-C sends the emergency stop. Exit
    /// status 0 when the sequence ran to its end, 1 on an emergency stop, a lost link or a
    /// refusal, 2 when the input cannot be read.
    Stream {
        /// The scene file.
        #[arg(value_name = "FILE")]
        file: PathBuf,
        /// Serial port of the device, for example /dev/ttyUSB0.
        #[arg(long, value_name = "PATH", conflicts_with = "simulated")]
        port: Option<String>,
        /// Stream to the built-in simulated device.
        #[arg(long)]
        simulated: bool,
        /// Setpoints per second, 50 to 1000 (default: the scene's link rate).
        #[arg(long, value_name = "HZ")]
        rate: Option<f64>,
        /// Start without asking for confirmation (the caution is still shown).
        #[arg(long)]
        yes: bool,
        /// After the last waypoint, move slowly to the rest pose (each joint's home), where the
        /// device then holds the arm.
        #[arg(long)]
        park: bool,
        /// Print the result as machine-readable JSON (progress stays on standard error).
        #[arg(long)]
        json: bool,
    },
    /// Jog the connected arm from the terminal: joints and the tool point, one typed command a line.
    ///
    /// The arm follows each command through the editor's jerk-limited follower at --share of
    /// each joint's limits (never faster than its servo can follow); the pose is printed as each
    /// move comes to rest. Commands: `j JOINT STEP` (degrees, or mm for a sliding joint),
    /// `t x|y|z STEP_MM` (the tool point, through inverse kinematics), `share PCT`, `show`,
    /// `help`, `quit` (come to rest and hold; also the end of input), and `stop`, which sends
    /// the emergency stop as soon as it is read (as does Ctrl-C). The safety caution is shown and
    /// a typed "yes" is needed unless --yes. Exit status 0 when quit, 1 on an emergency stop, a
    /// lost link or a refusal, 2 when the input cannot be read.
    Jog {
        /// The scene file.
        #[arg(value_name = "FILE")]
        file: PathBuf,
        /// Serial port of the device, for example /dev/ttyUSB0.
        #[arg(long, value_name = "PATH", conflicts_with = "simulated")]
        port: Option<String>,
        /// Jog the built-in simulated device's arm.
        #[arg(long)]
        simulated: bool,
        /// Share of each joint's limits the arm may use, in %, 1 to 100.
        #[arg(long = "share", value_name = "PCT", default_value_t = 10.0)]
        share_pct: f64,
        /// Start without asking for confirmation (the caution is still shown).
        #[arg(long)]
        yes: bool,
    },
    /// Print the scene file's reference (Markdown) or its JSON Schema.
    ///
    /// Both are generated from the field table that reads, writes and checks scene files, so they
    /// list every key with its unit, allowed range, default and meaning. docs/scene-format.md and
    /// docs/scene.schema.json in the repository are this output.
    Format {
        /// Print the Markdown reference of every key.
        #[arg(long, conflicts_with = "schema", required_unless_present = "schema")]
        reference: bool,
        /// Print the JSON Schema (draft 2020-12) of a scene file.
        #[arg(long)]
        schema: bool,
    },
    /// Release a device's emergency stop after a person has checked the arm.
    ///
    /// Shows the device's state (mode, faults, the pulses it sends), asks for a typed "yes"
    /// that the arm is safe unless --yes, sends the reset, and prints the mode the device
    /// reports afterwards. The device keeps its pulses (or stays limp) until something
    /// streams. Exit status 0 when the device reports no latched stop afterwards, 1 when it
    /// still does, was not confirmed or cannot be reached, 2 on bad arguments.
    Reset {
        /// Serial port of the device, for example /dev/ttyUSB0.
        #[arg(
            long,
            value_name = "PATH",
            conflicts_with = "simulated",
            required_unless_present = "simulated"
        )]
        port: Option<String>,
        /// Reset the built-in simulated device (a fresh one: nothing is latched).
        #[arg(long)]
        simulated: bool,
        /// Serial speed in baud (the reference firmware uses 115200).
        #[arg(long, value_name = "BAUD", default_value_t = 115_200)]
        baud: u32,
        /// Reset without asking for confirmation (the caution is still shown).
        #[arg(long)]
        yes: bool,
        /// Print the result as machine-readable JSON.
        #[arg(long)]
        json: bool,
    },
    /// Run the simulated device behind a pseudo-terminal and print its path, until Ctrl-C.
    ///
    /// Open the printed path with `stream --port` to use the real serial code path with no
    /// hardware.
    DeviceSim {
        /// Pulse channels the device announces, 1 to 8.
        #[arg(long, value_name = "N", default_value_t = 7)]
        channels: u8,
        /// What the device's analog inputs read.
        #[command(flatten)]
        readings: SimReadings,
    },
    /// Print the pose the input arm's analog inputs give, through the scene's `inputs`.
    ///
    /// Connects to the device, asks for its analog readings, maps each input to its joint
    /// through the measured points in the scene's `inputs` (least squares, as `calibrate`
    /// fits) and prints every joint's position; a joint with no input is at its home position.
    /// Moves nothing. Exit status 0 with a pose, 1 when the scene maps no input, the device
    /// sends no readings or a position lies outside its joint's limits, 2 on bad arguments.
    Capture {
        /// The scene file.
        #[arg(value_name = "FILE")]
        file: PathBuf,
        /// Serial port of the device, for example /dev/ttyUSB0.
        #[arg(
            long,
            value_name = "PATH",
            conflicts_with = "simulated",
            required_unless_present = "simulated"
        )]
        port: Option<String>,
        /// Read the built-in simulated device (give it readings to play, below).
        #[arg(long)]
        simulated: bool,
        /// Serial speed in baud (the reference firmware uses 115200).
        #[arg(long, value_name = "BAUD", default_value_t = 115_200)]
        baud: u32,
        /// What the simulated device's analog inputs read.
        #[command(flatten)]
        readings: SimReadings,
        /// Print machine-readable JSON (keys carry units) instead of text.
        #[arg(long)]
        json: bool,
    },
}

/// What the simulated device's analog inputs read: a recording or a slow sweep.
#[derive(Debug, Clone, Default, Args)]
pub struct SimReadings {
    /// Play analog readings from a recording: lines of "TIME_S READING READING …" (0–4095,
    /// rising times, `#` comments), held from one line to the next and repeated.
    #[arg(
        long = "readings",
        value_name = "FILE",
        conflicts_with = "sweep_inputs"
    )]
    pub recording: Option<PathBuf>,
    /// Sweep this many analog inputs (1 to 8) slowly: each swings on a sine around mid-scale,
    /// a sixth of a turn behind the one before.
    #[arg(long = "sweep-inputs", value_name = "N")]
    pub sweep_inputs: Option<u8>,
    /// Time for one full swing of the sweep, in seconds.
    #[arg(long = "sweep-period", value_name = "S", default_value_t = 8.0)]
    pub sweep_period_s: f64,
}

/// The plane an envelope map covers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum View {
    /// A horizontal plane seen from above.
    Top,
    /// The vertical plane through the base axis.
    Side,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn format_takes_exactly_one_of_reference_and_schema() {
        assert!(Cli::try_parse_from(["armwright", "format"]).is_err());
        assert!(Cli::try_parse_from(["armwright", "format", "--reference", "--schema"]).is_err());
        let cli = Cli::try_parse_from(["armwright", "format", "--schema"]).unwrap();
        assert!(matches!(
            cli.command,
            Command::Format {
                reference: false,
                schema: true
            }
        ));
    }

    #[test]
    fn negative_joint_positions_parse() {
        let cli = Cli::try_parse_from(["armwright", "pose", "a.json", "--joints", "-10,20.5,-3"])
            .unwrap();
        match cli.command {
            Command::Pose { joints, .. } => assert_eq!(joints, [-10.0, 20.5, -3.0]),
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn a_target_takes_three_to_five_numbers_and_near_is_optional() {
        let cli = Cli::try_parse_from(["armwright", "reach", "a.json", "--to", "150,-20,80,-30"])
            .unwrap();
        match cli.command {
            Command::Reach { to, near, .. } => {
                assert_eq!(to, [150.0, -20.0, 80.0, -30.0]);
                assert!(near.is_none());
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn the_envelope_view_is_top_or_side() {
        assert!(
            Cli::try_parse_from(["armwright", "envelope", "a.json", "--view", "front"]).is_err()
        );
        let cli = Cli::try_parse_from([
            "armwright",
            "envelope",
            "a.json",
            "--view",
            "side",
            "--at",
            "-45",
            "--cells",
            "50",
        ])
        .unwrap();
        match cli.command {
            Command::Envelope {
                view, at, cells, ..
            } => {
                assert_eq!(view, View::Side);
                assert_eq!(at, Some(-45.0));
                assert_eq!(cells, 50);
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn retime_needs_an_overshoot_and_takes_a_share() {
        assert!(Cli::try_parse_from(["armwright", "retime", "a.json"]).is_err());
        let cli = Cli::try_parse_from([
            "armwright",
            "retime",
            "a.json",
            "--max-overshoot",
            "1.5",
            "--torque-share",
            "0.6",
        ])
        .unwrap();
        match cli.command {
            Command::Retime {
                max_overshoot,
                torque_share,
                min_dwell,
                write,
                ..
            } => {
                assert_eq!(max_overshoot, 1.5);
                assert_eq!(torque_share, Some(0.6));
                assert_eq!(min_dwell, 0.0);
                assert!(write.is_none());
            }
            other => panic!("{other:?}"),
        }
    }

    #[test]
    fn stream_takes_a_port_or_the_simulated_device_but_not_both() {
        assert!(
            Cli::try_parse_from([
                "armwright",
                "stream",
                "a.json",
                "--port",
                "/dev/x",
                "--simulated"
            ])
            .is_err()
        );
        let cli = Cli::try_parse_from(["armwright", "stream", "a.json", "--rate", "100", "--yes"])
            .unwrap();
        match cli.command {
            Command::Stream {
                port,
                simulated,
                rate,
                yes,
                json,
                ..
            } => {
                assert_eq!(
                    (port, simulated, rate, yes, json),
                    (None, false, Some(100.0), true, false)
                );
            }
            other => panic!("{other:?}"),
        }
        let cli =
            Cli::try_parse_from(["armwright", "reset", "--port", "/dev/ttyACM0", "--yes"]).unwrap();
        assert!(matches!(
            cli.command,
            Command::Reset {
                port: Some(_),
                simulated: false,
                baud: 115_200,
                yes: true,
                json: false
            }
        ));
        assert!(Cli::try_parse_from(["armwright", "reset"]).is_err());
        let cli = Cli::try_parse_from(["armwright", "device-sim", "--channels", "4"]).unwrap();
        assert!(matches!(
            cli.command,
            Command::DeviceSim {
                channels: 4,
                readings: SimReadings {
                    recording: None,
                    sweep_inputs: None,
                    ..
                }
            }
        ));
        let cli = Cli::try_parse_from([
            "armwright",
            "capture",
            "a.json",
            "--simulated",
            "--sweep-inputs",
            "6",
        ])
        .unwrap();
        match cli.command {
            Command::Capture {
                simulated,
                readings,
                ..
            } => {
                assert!(simulated);
                assert_eq!(readings.sweep_inputs, Some(6));
                assert_eq!(readings.sweep_period_s, 8.0);
            }
            other => panic!("{other:?}"),
        }
        assert!(Cli::try_parse_from(["armwright", "capture", "a.json"]).is_err());
        assert!(
            Cli::try_parse_from([
                "armwright",
                "device-sim",
                "--readings",
                "r.txt",
                "--sweep-inputs",
                "2"
            ])
            .is_err()
        );
    }

    #[test]
    fn the_declaration_is_consistent() {
        use clap::CommandFactory;
        Cli::command().debug_assert();
    }
}
