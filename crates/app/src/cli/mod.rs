//! The command line: `check`, `pose`, `reach`, `envelope`, `plan`, `simulate`, `retime`,
//! `calibrate`, `protractor`, `ports`, `stream`, `reset`, `jog`, `device-sim`, `capture`, `format`.
//!
//! Naming scheme: `args.rs` declares every option (clap derive); one file per subcommand
//! (`check.rs`, `pose.rs`, `reach.rs`, `envelope.rs`, `plan.rs`, `simulate.rs`, `retime.rs`,
//! `calibrate.rs`, `protractor.rs`, `ports.rs`, `stream.rs`, `reset.rs`, `jog.rs`, `device_sim.rs`,
//! `capture.rs`,
//! `format.rs`); `report.rs` prints results as text or
//! JSON and loads the scene for a subcommand; `svg.rs` draws an envelope map.
//!
//! Exit status: 0 on success, 1 when the scene has problems or a target cannot be reached (for
//! `stream`: an emergency stop, a lost link or a refusal), 2 when the input cannot be read
//! (missing file, not JSON, not a scene, newer version, bad arguments).

mod args;
mod calibrate;
mod capture;
mod check;
mod clearance;
mod device_sim;
mod envelope;
mod format;
mod jog;
mod plan;
mod ports;
mod pose;
mod protractor;
mod reach;
mod report;
mod reset;
mod retime;
mod simulate;
mod stream;
mod svg;

pub use args::{Cli, Command, SimReadings, View};

use clap::Parser;
use std::process::ExitCode;

/// How a subcommand ended; its number is the process exit status.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// 0: done.
    Done,
    /// 1: the scene has problems, a target cannot be reached, or a stream was stopped, lost
    /// or refused.
    Refused,
    /// 2: the input cannot be read.
    Unreadable,
}

impl Outcome {
    /// The process exit status: 0, 1 or 2.
    pub fn code(self) -> u8 {
        match self {
            Outcome::Done => 0,
            Outcome::Refused => 1,
            Outcome::Unreadable => 2,
        }
    }
}

/// Parses the process arguments and runs the subcommand; the exit code says how it went.
pub fn run() -> ExitCode {
    quiet_on_closed_output();
    let cli = Cli::parse();
    ExitCode::from(execute(&cli.command).code())
}

/// A reader that stops early (`armwright plan … | head`) closes standard output; printing then
/// fails and the standard library panics. End quietly with status 0 instead, as other command
/// line tools do; every other panic keeps the default report.
fn quiet_on_closed_output() {
    let default = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        let message = info
            .payload()
            .downcast_ref::<String>()
            .map(String::as_str)
            .or_else(|| info.payload().downcast_ref::<&str>().copied())
            .unwrap_or("");
        if message.starts_with("failed printing to stdout") {
            std::process::exit(0);
        }
        default(info);
    }));
}

/// Runs one subcommand, printing to standard output (results) and standard error (failures
/// in text mode).
pub fn execute(command: &Command) -> Outcome {
    match command {
        Command::Check { file, json } => check::run(file, *json),
        Command::Pose { file, joints, json } => pose::run(file, joints, *json),
        Command::Reach {
            file,
            to,
            near,
            json,
        } => reach::run(file, to, near.as_deref(), *json),
        Command::Envelope {
            file,
            view,
            at,
            cells,
            json,
            svg,
        } => envelope::run(file, *view, *at, *cells, *json, svg.as_deref()),
        Command::Plan {
            file,
            rate,
            csv,
            json,
        } => plan::run(file, *rate, csv.as_deref(), *json),
        Command::Simulate { file, json } => simulate::run(file, *json),
        Command::Retime {
            file,
            max_overshoot,
            torque_share,
            min_dwell,
            write,
            json,
        } => {
            let request = retime::RetimeRequest {
                max_overshoot_mm: *max_overshoot,
                torque_share: *torque_share,
                min_dwell_ms: *min_dwell,
                write: write.as_deref(),
            };
            retime::run(file, &request, *json)
        }
        Command::Calibrate {
            file,
            joint,
            points,
            port,
            simulated,
            yes,
            write,
            json,
        } => {
            let device = match (port, simulated) {
                (Some(path), _) => Some(calibrate::StepDevice::Port(path.clone())),
                (None, true) => Some(calibrate::StepDevice::Simulated),
                (None, false) => None,
            };
            let request = calibrate::CalibrateRequest {
                joint,
                points,
                device,
                yes: *yes,
                write: write.as_deref(),
            };
            calibrate::run(file, &request, *json)
        }
        Command::Protractor { out } => protractor::run(out.as_deref()),
        Command::Ports { json } => ports::run(*json),
        Command::Stream {
            file,
            port,
            simulated,
            rate,
            yes,
            park,
            json,
        } => {
            let request = stream::StreamRequest {
                port: port.as_deref(),
                simulated: *simulated,
                rate_hz: *rate,
                yes: *yes,
                park: *park,
                json: *json,
            };
            stream::run(file, &request)
        }
        Command::Reset {
            port,
            simulated,
            baud,
            yes,
            json,
        } => reset::run(&reset::ResetRequest {
            port: port.as_deref(),
            simulated: *simulated,
            baud: *baud,
            yes: *yes,
            json: *json,
        }),
        Command::Jog {
            file,
            port,
            simulated,
            share_pct,
            yes,
        } => jog::run(
            file,
            &jog::JogRequest {
                port: port.as_deref(),
                simulated: *simulated,
                share_pct: *share_pct,
                yes: *yes,
            },
        ),
        Command::DeviceSim { channels, readings } => device_sim::run(*channels, readings),
        Command::Capture {
            file,
            port,
            simulated,
            baud,
            readings,
            json,
        } => capture::run(
            file,
            &capture::CaptureRequest {
                port: port.as_deref(),
                simulated: *simulated,
                baud: *baud,
                readings,
                json: *json,
            },
        ),
        Command::Format { reference, .. } => format::run(*reference),
    }
}
