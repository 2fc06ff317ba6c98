//! `armwright device-sim`: the simulated device behind a pseudo-terminal, so `stream --port`
//! can use the real serial code path with no hardware. Prints the path on standard output,
//! each change of the device's mode, faults or watchdog trips, and of which channels send
//! pulses, on standard error, and runs
//! until Ctrl-C; then says how long its process waited for a processor, time the device's
//! clock left out as a microcontroller's would. Its analog inputs can play a recording (`--readings FILE`) or sweep slowly
//! (`--sweep-inputs N`); `readings_source` turns those options into the device's source, for
//! `capture --simulated` too.

use std::time::Duration;

use armwright_link::{MAX_CHANNELS, ReadingsRecording, ReadingsSource};
use serde_json::json;

use super::Outcome;
use super::args::SimReadings;
use super::report::fail;

/// The simulated device's analog readings from the options: `None` when none were asked for.
///
/// # Errors
/// What is wrong, naming the option: a recording that cannot be read or parsed (with its
/// line), an input count outside 1–8, a sweep period that is not a positive number of seconds.
pub(super) fn readings_source(options: &SimReadings) -> Result<Option<ReadingsSource>, String> {
    if let Some(path) = &options.recording {
        let text = std::fs::read_to_string(path)
            .map_err(|error| format!("--readings: cannot read {}: {error}", path.display()))?;
        let recording = ReadingsRecording::parse(&text)
            .map_err(|error| format!("--readings: {}: {error}", path.display()))?;
        return Ok(Some(ReadingsSource::Recorded(recording)));
    }
    let Some(inputs) = options.sweep_inputs else {
        return Ok(None);
    };
    if inputs == 0 || usize::from(inputs) > MAX_CHANNELS {
        return Err(format!(
            "--sweep-inputs: {inputs} is not between 1 and {MAX_CHANNELS}"
        ));
    }
    let period = options.sweep_period_s;
    if !(period.is_finite() && (0.1..=3600.0).contains(&period)) {
        return Err(format!(
            "--sweep-period: {period} s is not between 0.1 s and 3600 s"
        ));
    }
    Ok(Some(ReadingsSource::Scripted {
        inputs,
        period: Duration::from_secs_f64(period),
    }))
}

#[cfg(unix)]
pub(crate) fn run(channels: u8, readings: &SimReadings) -> Outcome {
    use armwright_link::{SimDevice, SimDeviceConfig, SimPty};

    if channels == 0 || usize::from(channels) > MAX_CHANNELS {
        let message = format!("--channels: {channels} is not between 1 and {MAX_CHANNELS}");
        return fail(false, &message, json!({}), Outcome::Unreadable);
    }
    let source = match readings_source(readings) {
        Ok(source) => source,
        Err(message) => return fail(false, &message, json!({}), Outcome::Unreadable),
    };
    let (ended_tx, ended_rx) = std::sync::mpsc::channel();
    if let Err(error) = ctrlc::set_handler(move || {
        let _ = ended_tx.send(());
    }) {
        let message = format!("cannot catch Ctrl-C: {error}");
        return fail(false, &message, json!({}), Outcome::Refused);
    }
    let config = SimDeviceConfig {
        channel_count: channels,
        own_process: true,
        ..SimDeviceConfig::default()
    };
    let mut device = SimDevice::new(config);
    let inputs = source.as_ref().map_or(0, ReadingsSource::input_count);
    if let Some(source) = source {
        device = device.with_readings(source);
    }
    let pty = match SimPty::spawn_device(device) {
        Ok(pty) => pty,
        Err(error) => return fail(false, &error.to_string(), json!({}), Outcome::Refused),
    };
    println!("{}", pty.path());
    eprintln!(
        "simulated device with {channels} channels and {inputs} analog inputs at {}; open it \
         with `armwright stream FILE --port {}`; Ctrl-C ends it",
        pty.path(),
        pty.path()
    );
    let mut shown = None;
    let mut shown_channels = Vec::new();
    loop {
        // Watched without locking the device: this thread held up by a busy computer must not
        // hold the device up.
        if let Some((status, output)) = pty.watch() {
            let seen = (status.mode, status.faults, status.watchdog_trips);
            if shown != Some(seen) {
                shown = Some(seen);
                eprintln!(
                    "device: mode {:?}, faults {:02X}, watchdog trips {}",
                    status.mode, status.faults.0, status.watchdog_trips
                );
            }
            let channels: Vec<usize> = output
                .as_slice()
                .iter()
                .enumerate()
                .filter_map(|(channel, pulse)| pulse.map(|_| channel))
                .collect();
            if channels != shown_channels {
                let list: Vec<String> = channels.iter().map(ToString::to_string).collect();
                eprintln!("device: pulses on channels [{}]", list.join(", "));
                shown_channels = channels;
            }
        }
        match ended_rx.recv_timeout(std::time::Duration::from_millis(10)) {
            Err(std::sync::mpsc::RecvTimeoutError::Timeout) => {}
            Ok(()) | Err(std::sync::mpsc::RecvTimeoutError::Disconnected) => break,
        }
    }
    let waits = pty.processor_waits();
    drop(pty);
    eprintln!("simulated device stopped");
    if waits.seen {
        // A microcontroller is never held up: time the simulator waited for a processor
        // was not device time (so it did not count toward the watchdog).
        eprintln!(
            "its clock left out {:.0} ms this process waited for a processor (longest {:.0} ms)",
            waits.total.as_secs_f64() * 1e3,
            waits.longest.as_secs_f64() * 1e3
        );
    }
    Outcome::Done
}

#[cfg(not(unix))]
pub(crate) fn run(channels: u8, readings: &SimReadings) -> Outcome {
    let _ = (channels, readings);
    fail(
        false,
        "the simulated device behind a pseudo-terminal needs a Unix-like system; use \
         `stream --simulated` instead",
        json!({}),
        Outcome::Refused,
    )
}
