//! `armwright reset`: connects to a device, shows its state (mode, faults, what it sends),
//! asks a person to confirm that the arm is safe, clears the emergency-stop latch and the
//! sticky faults, and prints the mode the device reports afterwards.

use std::io::IsTerminal;

use armwright_link::{
    ChannelOutput, DeviceInfo, DeviceMode, DeviceStatus, Faults, Link, ResetConfirmation,
    SerialTransport, SimDeviceConfig, SimTransport, StreamOptions, Transport,
};
use serde_json::{Value, json};

use super::Outcome;
use super::report::{fail, print_json, rounded};
use super::stream::confirm;

/// Shown before anything is sent, whether or not confirmation is asked for.
pub(crate) const RESET_CAUTION: &str = "\
CAUTION: a reset releases the emergency stop. The device keeps its pulses (or stays limp),
and the arm moves again as soon as anything streams to it. Check the arm and its
surroundings first. A software stop is not a safety device: keep a hard power cut-off
within reach, keep clear of the arm's reach while it is powered, and defer to local codes
and licensed practice.";

/// The options of one `reset` run.
pub(crate) struct ResetRequest<'a> {
    /// `--port PATH`.
    pub port: Option<&'a str>,
    /// `--simulated`.
    pub simulated: bool,
    /// `--baud BAUD`.
    pub baud: u32,
    /// `--yes`: no confirmation asked.
    pub yes: bool,
    /// `--json`: the result as JSON on standard output.
    pub json: bool,
}

pub(crate) fn run(request: &ResetRequest) -> Outcome {
    let json = request.json;
    let name = request.port.unwrap_or("simulated device");
    eprintln!("{RESET_CAUTION}");
    let transport: Box<dyn Transport> = match (request.port, request.simulated) {
        (Some(path), _) => match SerialTransport::open(path, request.baud) {
            Ok(port) => Box::new(port),
            Err(error) => return fail(json, &error.to_string(), json!({}), Outcome::Refused),
        },
        (None, true) => Box::new(SimTransport::new(SimDeviceConfig::default())),
        (None, false) => {
            let message = "say which device to reset: --port PATH or --simulated";
            return fail(json, message, json!({}), Outcome::Unreadable);
        }
    };
    let link = match Link::connect(transport, StreamOptions::default()) {
        Ok(link) => link,
        Err(error) => {
            let message = format!("cannot connect to {name}: {error}");
            return fail(json, &message, json!({}), Outcome::Refused);
        }
    };
    let info = link.device();
    let Some(before) = link.device_status() else {
        let message = format!("{name} did not report its state");
        return fail(json, &message, json!({}), Outcome::Refused);
    };
    let output = link.device_output();
    eprintln!("{name} before the reset: {}", describe(&before));
    eprintln!("  sending: {}", describe_output(output.as_ref(), &info));
    if !request.yes {
        eprint!("Type yes if the arm is safe to release at {name}: ");
        let answer = confirm(&mut std::io::stdin().lock());
        if !std::io::stdin().is_terminal() {
            eprintln!();
        }
        if let Err(reason) = answer {
            let message = format!("{reason}; the device was not reset");
            return fail(json, &message, state_json(&before, None), Outcome::Refused);
        }
    }
    if let Err(error) = link.reset_after_stop(ResetConfirmation::confirmed_by_person()) {
        let message = format!("the device did not take the reset: {error}");
        return fail(json, &message, state_json(&before, None), Outcome::Refused);
    }
    let after = match link.refresh_state() {
        Ok(state) => state.status,
        Err(error) => {
            let message =
                format!("the device took the reset but did not report its state: {error}");
            return fail(json, &message, state_json(&before, None), Outcome::Refused);
        }
    };
    let latched =
        after.mode == DeviceMode::Stopped || after.faults.contains(Faults::EMERGENCY_STOP);
    if json {
        let mut body = state_json(&before, Some(&after));
        body["ok"] = json!(!latched);
        body["device"] = json!(name);
        body["output_before_us"] = output_json(output.as_ref(), &info);
        print_json(&body);
    } else {
        println!("{name} after the reset: {}", describe(&after));
        if latched {
            eprintln!("error: the device still reports a latched emergency stop");
        } else {
            println!("the stop is released; the device moves again only when you stream");
        }
    }
    if latched {
        Outcome::Refused
    } else {
        Outcome::Done
    }
}

/// The mode as a person reads it.
fn mode_words(mode: DeviceMode) -> &'static str {
    match mode {
        DeviceMode::Limp => "limp (no pulses)",
        DeviceMode::Driving => "driving (following setpoints)",
        DeviceMode::Keeping => "holding its pulses",
        DeviceMode::Stopped => "emergency stop latched (holding its pulses)",
    }
}

/// The mode as JSON names it.
fn mode_key(mode: DeviceMode) -> &'static str {
    match mode {
        DeviceMode::Limp => "limp",
        DeviceMode::Driving => "driving",
        DeviceMode::Keeping => "holding",
        DeviceMode::Stopped => "stopped",
    }
}

fn fault_words(faults: Faults) -> Vec<&'static str> {
    [
        (Faults::WATCHDOG, "watchdog tripped"),
        (Faults::EMERGENCY_STOP, "emergency stop latched"),
        (Faults::CLAMPED, "a value was clamped"),
        (Faults::BAD_INPUT, "bad input seen"),
        (Faults::OVERFLOW, "input queue overflowed"),
    ]
    .into_iter()
    .filter(|(bit, _)| faults.contains(*bit))
    .map(|(_, words)| words)
    .collect()
}

fn describe(status: &DeviceStatus) -> String {
    let faults = fault_words(status.faults);
    format!(
        "{}; faults {:02X} ({}); watchdog trips since power-up {}",
        mode_words(status.mode),
        status.faults.0,
        if faults.is_empty() {
            "none".to_owned()
        } else {
            faults.join(", ")
        },
        status.watchdog_trips
    )
}

/// What a device sends, for a person: each channel's pulse in µs or "limp".
pub(super) fn describe_output(output: Option<&ChannelOutput>, info: &DeviceInfo) -> String {
    let Some(output) = output else {
        return "unknown (the device speaks protocol 1)".to_owned();
    };
    output
        .as_slice()
        .iter()
        .enumerate()
        .map(|(channel, value)| match value {
            Some(units) => format!("ch{channel} {:.1} µs", info.us_from_units(*units)),
            None => format!("ch{channel} limp"),
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// What a device sends, as JSON: one pulse in µs or null (limp) per channel; null when the
/// device cannot say.
pub(super) fn output_json(output: Option<&ChannelOutput>, info: &DeviceInfo) -> Value {
    output.map_or(Value::Null, |output| {
        output
            .as_slice()
            .iter()
            .map(|value| {
                value.map_or(Value::Null, |units| {
                    json!(rounded(info.us_from_units(units), 3))
                })
            })
            .collect()
    })
}

fn state_json(before: &DeviceStatus, after: Option<&DeviceStatus>) -> Value {
    let one = |status: &DeviceStatus| {
        json!({
            "mode": mode_key(status.mode),
            "faults": format!("{:02X}", status.faults.0),
            "watchdog_trips": status.watchdog_trips,
        })
    };
    json!({
        "before": one(before),
        "after": after.map_or(Value::Null, one),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_caution_says_what_every_caution_says() {
        let caution = RESET_CAUTION.replace('\n', " ").to_lowercase();
        for phrase in [
            "a software stop is not a safety device",
            "hard power cut-off within reach",
            "keep clear of the arm's reach while it is powered",
            "local codes and licensed practice",
        ] {
            assert!(caution.contains(phrase), "{phrase}");
        }
    }

    #[test]
    fn faults_are_named() {
        assert_eq!(
            fault_words(Faults(0x03)),
            ["watchdog tripped", "emergency stop latched"]
        );
        assert!(fault_words(Faults(0)).is_empty());
    }
}
