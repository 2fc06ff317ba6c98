//! Transports: the byte pipe the streaming thread talks through (a serial port, a
//! pseudo-terminal, or the in-process simulated device), and serial-port discovery.

use std::io::{self, Read, Write};
use std::sync::{Arc, Mutex, PoisonError};
use std::time::{Duration, Instant};

use crate::error::LinkError;
#[cfg(unix)]
use crate::protocol::{ChannelOutput, DeviceStatus};
#[cfg(unix)]
use crate::sim_clock::SimClock;
use crate::sim_device::{SimDevice, SimDeviceConfig};

/// A byte pipe to a device. The streaming thread owns it.
pub trait Transport: Send {
    /// Writes every byte of `bytes`.
    ///
    /// # Errors
    /// The operating system's error; the streaming thread then reports the link lost.
    fn write_all(&mut self, bytes: &[u8]) -> io::Result<()>;

    /// Reads the bytes that have arrived into `buf`, waiting at most `timeout` for the first;
    /// returns `Ok(0)` when none arrived in time.
    ///
    /// # Errors
    /// The operating system's error; the streaming thread then reports the link lost.
    fn read_timeout(&mut self, buf: &mut [u8], timeout: Duration) -> io::Result<usize>;

    /// How often an idle streaming thread must look at this transport although it expects
    /// nothing from it; `None` (the default): only when its heartbeat is due. A port needs no
    /// looking at; the in-process simulated device moves its clock only when looked at.
    fn idle_look_interval(&self) -> Option<Duration> {
        None
    }
}

/// A serial port (or the device end of a pseudo-terminal) opened with the `serialport` crate.
pub struct SerialTransport {
    port: Box<dyn serialport::SerialPort>,
    timeout: Duration,
}

impl SerialTransport {
    /// Opens `path` at `baud_rate` (115 200 for the reference firmware), 8N1, no flow control.
    ///
    /// # Errors
    /// [`LinkError::OpenPort`] with the operating system's reason, and what to do when the
    /// reason is a refused permission.
    pub fn open(path: &str, baud_rate: u32) -> Result<Self, LinkError> {
        let timeout = Duration::from_millis(1);
        let port = serialport::new(path, baud_rate)
            .timeout(timeout)
            .open()
            .map_err(|error| open_failure(path, &error))?;
        Ok(Self { port, timeout })
    }
}

/// The error for a port that would not open: the operating system's reason, and when that is a
/// refused permission, how to get access (serial ports on Linux belong to a group, commonly
/// `dialout`, that the user must be in; common practice).
fn open_failure(path: &str, error: &serialport::Error) -> LinkError {
    let mut reason = error.to_string();
    if error.kind() == serialport::ErrorKind::Io(io::ErrorKind::PermissionDenied) {
        reason = format!(
            "{reason}; your user may not use this port. On Linux, see which group owns it with \
             `ls -l {path}` (commonly dialout, uucp on some systems), join that group with \
             `sudo usermod -aG dialout $USER` and log out and in again, or give the port to \
             your group with a udev rule (see docs/own-arm.md)"
        );
    }
    LinkError::OpenPort {
        path: path.to_owned(),
        reason,
    }
}

impl Transport for SerialTransport {
    fn write_all(&mut self, bytes: &[u8]) -> io::Result<()> {
        // No flush: on a serial port it waits until every byte has left the wire (3 ms for
        // a setpoint at 115 200 baud), which would hold up the streaming loop and the stop.
        self.port.write_all(bytes)
    }

    fn read_timeout(&mut self, buf: &mut [u8], timeout: Duration) -> io::Result<usize> {
        if timeout != self.timeout {
            self.port.set_timeout(timeout).map_err(io::Error::other)?;
            self.timeout = timeout;
        }
        match self.port.read(buf) {
            Ok(count) => Ok(count),
            Err(error)
                if matches!(
                    error.kind(),
                    io::ErrorKind::TimedOut
                        | io::ErrorKind::WouldBlock
                        | io::ErrorKind::Interrupted
                ) =>
            {
                Ok(0)
            }
            Err(error) => Err(error),
        }
    }
}

/// The in-process simulated device as a transport, on the wall clock.
///
/// Clone [`SimTransport::device`] before handing the transport to the streaming thread to
/// watch the device's pulses and mode (for example, to draw the arm as the device moves it).
pub struct SimTransport {
    device: Arc<Mutex<SimDevice>>,
    start: Instant,
}

impl SimTransport {
    /// A simulated device powered up now.
    pub fn new(config: SimDeviceConfig) -> Self {
        Self::with_device(SimDevice::new(config))
    }

    /// `device` (for example one built with [`SimDevice::with_arm`]) on the wall clock from
    /// now: its clock reads the time since this call.
    pub fn with_device(device: SimDevice) -> Self {
        Self {
            device: Arc::new(Mutex::new(device)),
            start: Instant::now(),
        }
    }

    /// A shared handle to the simulated device; its clock is the time since [`SimTransport::new`].
    pub fn device(&self) -> Arc<Mutex<SimDevice>> {
        Arc::clone(&self.device)
    }

    /// Time since power-up, the simulated device's clock.
    pub fn elapsed(&self) -> Duration {
        self.start.elapsed()
    }

    /// Another transport to the same device on the same clock, as when a second host takes
    /// over the cable (for example after the first one was killed). Bytes the device sends
    /// go to whichever transport reads them first.
    pub fn share(&self) -> Self {
        Self {
            device: Arc::clone(&self.device),
            start: self.start,
        }
    }
}

impl Transport for SimTransport {
    fn write_all(&mut self, bytes: &[u8]) -> io::Result<()> {
        let now = self.start.elapsed();
        let mut device = self.device.lock().unwrap_or_else(PoisonError::into_inner);
        device.receive(bytes, now);
        device.advance(now);
        Ok(())
    }

    fn read_timeout(&mut self, buf: &mut [u8], timeout: Duration) -> io::Result<usize> {
        let until = Instant::now() + timeout;
        loop {
            let count = {
                let mut device = self.device.lock().unwrap_or_else(PoisonError::into_inner);
                device.advance(self.start.elapsed());
                device.read_output(buf)
            };
            let now = Instant::now();
            if count > 0 || now >= until {
                return Ok(count);
            }
            // A millisecond between looks: the stream thread's own tick while it waits for
            // an answer.
            std::thread::sleep((until - now).min(Duration::from_millis(1)));
        }
    }

    /// Once a pulse frame: the device starts its frames (and moves its arm) only when
    /// looked at, and a window drawing that arm wants every frame.
    fn idle_look_interval(&self) -> Option<Duration> {
        let device = self.device.lock().unwrap_or_else(PoisonError::into_inner);
        Some(device.frame_period())
    }
}

/// The simulated device behind a pseudo-terminal, so the real serial code path can be used
/// with no hardware: open [`SimPty::path`] with [`SerialTransport::open`]. The device runs in
/// its own thread until this value is dropped, on a microcontroller's clock: the wall clock
/// less the time that thread waited for a processor (on Linux), so a busy computer does not
/// trip the device's watchdog while the host's lines wait unread ([`SimPty::processor_waits`]).
#[cfg(unix)]
pub struct SimPty {
    path: String,
    device: Arc<Mutex<SimDevice>>,
    waits: Arc<Mutex<ProcessorWaits>>,
    seen: Arc<Mutex<Option<(DeviceStatus, ChannelOutput)>>>,
    running: Arc<std::sync::atomic::AtomicBool>,
    thread: Option<std::thread::JoinHandle<()>>,
}

/// The time a [`SimPty`]'s thread waited for a processor, which its device's clock does not
/// count (a microcontroller is never held up).
#[cfg(unix)]
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct ProcessorWaits {
    /// Whether the waits can be seen on this system (Linux); when not, the device runs on
    /// the wall clock and the durations stay zero.
    pub seen: bool,
    /// All the waits since the device started.
    pub total: Duration,
    /// The longest wait between two looks at the pseudo-terminal.
    pub longest: Duration,
}

#[cfg(unix)]
impl SimPty {
    /// Powers up a simulated device behind a new pseudo-terminal.
    ///
    /// # Errors
    /// [`LinkError::Pty`] when the operating system cannot make one.
    pub fn spawn(config: SimDeviceConfig) -> Result<Self, LinkError> {
        Self::spawn_device(SimDevice::new(config))
    }

    /// Puts `device` (for example one built with [`SimDevice::with_arm`]) behind a new
    /// pseudo-terminal, on the wall clock from now.
    ///
    /// # Errors
    /// [`LinkError::Pty`] when the operating system cannot make one.
    pub fn spawn_device(device: SimDevice) -> Result<Self, LinkError> {
        use std::sync::atomic::{AtomicBool, Ordering};
        let pty_error = |error: serialport::Error| LinkError::Pty {
            reason: error.to_string(),
        };
        let (mut master, device_end) = serialport::TTYPort::pair().map_err(pty_error)?;
        let path = serialport::SerialPort::name(&device_end).ok_or_else(|| LinkError::Pty {
            reason: "the pseudo-terminal has no name".to_owned(),
        })?;
        serialport::SerialPort::set_timeout(&mut master, Duration::from_millis(1))
            .map_err(pty_error)?;
        let device = Arc::new(Mutex::new(device));
        let waits = Arc::new(Mutex::new(ProcessorWaits::default()));
        let seen = Arc::new(Mutex::new(None));
        let running = Arc::new(AtomicBool::new(true));
        let thread = {
            let device = Arc::clone(&device);
            let waits = Arc::clone(&waits);
            let seen = Arc::clone(&seen);
            let running = Arc::clone(&running);
            std::thread::Builder::new()
                .name("armwright-sim-pty".to_owned())
                .spawn(move || {
                    // Keeping the device end open stops reads on the master failing while
                    // no host has the path open.
                    let _device_end = device_end;
                    let mut clock = SimClock::start();
                    let mut buf = [0u8; 256];
                    let mut out = Vec::new();
                    while running.load(Ordering::Relaxed) {
                        // The time is taken before the read: if this thread is held up
                        // between the two, the bytes that arrived meanwhile are still read
                        // before the device judges its watchdog, as a microcontroller,
                        // which is never held up, would have seen them. The clock leaves
                        // out the time this thread waited for a processor (see SimClock).
                        let now = clock.now();
                        // Never waits for a lock a watcher holds: a watcher held up while holding
                        // it would hold the device up too. The next turn tries again.
                        if let Ok(mut waits) = waits.try_lock() {
                            *waits = ProcessorWaits {
                                seen: clock.sees_waits(),
                                total: clock.not_counted(),
                                longest: clock.longest_wait(),
                            };
                        }
                        let count = match master.read(&mut buf) {
                            Ok(count) => count,
                            Err(_) => {
                                std::thread::sleep(Duration::from_micros(500));
                                0
                            }
                        };
                        {
                            let mut device = device.lock().unwrap_or_else(PoisonError::into_inner);
                            device.receive(&buf[..count], now);
                            device.advance(now);
                            device.take_output(&mut out);
                            if let Ok(mut seen) = seen.try_lock() {
                                *seen = Some((device.status(), device.output()));
                            }
                        }
                        // The port's 1 ms timeout applies to writes too: what a host that is
                        // slow to read leaves unwritten stays in `out` for the next turn
                        // instead of being lost (a device's output is never dropped).
                        while !out.is_empty() {
                            match master.write(&out) {
                                Ok(0) => break,
                                Ok(written) => {
                                    out.drain(..written);
                                }
                                Err(error) if error.kind() == io::ErrorKind::Interrupted => {}
                                Err(_) => break,
                            }
                        }
                    }
                })
                .map_err(|error| LinkError::Pty {
                    reason: error.to_string(),
                })?
        };
        Ok(Self {
            path,
            device,
            waits,
            seen,
            running,
            thread: Some(thread),
        })
    }

    /// Path of the pseudo-terminal to open, for example `/dev/pts/3`.
    pub fn path(&self) -> &str {
        &self.path
    }

    /// A shared handle to the simulated device.
    pub fn device(&self) -> Arc<Mutex<SimDevice>> {
        Arc::clone(&self.device)
    }

    /// How long the device's thread has waited for a processor, time its clock left out.
    pub fn processor_waits(&self) -> ProcessorWaits {
        *self.waits.lock().unwrap_or_else(PoisonError::into_inner)
    }

    /// The device's status and output as its thread last saw them (`None` before its first
    /// turn), for watching it without locking it: the device never waits for a watcher.
    pub fn watch(&self) -> Option<(DeviceStatus, ChannelOutput)> {
        *self.seen.lock().unwrap_or_else(PoisonError::into_inner)
    }
}

#[cfg(unix)]
impl Drop for SimPty {
    fn drop(&mut self) {
        self.running
            .store(false, std::sync::atomic::Ordering::Relaxed);
        if let Some(thread) = self.thread.take() {
            let _ = thread.join();
        }
    }
}

/// USB identity of a serial port.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct UsbIds {
    /// USB vendor id.
    pub vendor_id: u16,
    /// USB product id.
    pub product_id: u16,
    /// Serial number, if the device reports one.
    pub serial_number: Option<String>,
    /// Manufacturer text, if reported.
    pub manufacturer: Option<String>,
    /// Product text, if reported.
    pub product: Option<String>,
}

/// One serial port found on this computer.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PortSummary {
    /// Path or name to open it by (for example `/dev/ttyUSB0`).
    pub path: String,
    /// USB identity, for USB serial adapters and boards.
    pub usb: Option<UsbIds>,
    /// A one-line description for people.
    pub description: String,
}

/// The serial ports of this computer, with USB vendor and product ids where known, sorted
/// by path.
///
/// # Errors
/// [`LinkError::ListPorts`] when the operating system cannot be asked.
pub fn list_ports() -> Result<Vec<PortSummary>, LinkError> {
    let ports = serialport::available_ports().map_err(|error| LinkError::ListPorts {
        reason: error.to_string(),
    })?;
    let mut summaries: Vec<PortSummary> = ports.into_iter().map(summarise).collect();
    summaries.sort_by(|a, b| a.path.cmp(&b.path));
    Ok(summaries)
}

fn summarise(info: serialport::SerialPortInfo) -> PortSummary {
    match info.port_type {
        serialport::SerialPortType::UsbPort(usb) => {
            let named = [usb.manufacturer.as_deref(), usb.product.as_deref()]
                .into_iter()
                .flatten()
                .collect::<Vec<_>>()
                .join(" ");
            let description = if named.is_empty() {
                format!("USB serial {:04x}:{:04x}", usb.vid, usb.pid)
            } else {
                format!("{named} (USB {:04x}:{:04x})", usb.vid, usb.pid)
            };
            PortSummary {
                path: info.port_name,
                usb: Some(UsbIds {
                    vendor_id: usb.vid,
                    product_id: usb.pid,
                    serial_number: usb.serial_number,
                    manufacturer: usb.manufacturer,
                    product: usb.product,
                }),
                description,
            }
        }
        serialport::SerialPortType::PciPort => PortSummary {
            path: info.port_name,
            usb: None,
            description: "built-in serial port".to_owned(),
        },
        serialport::SerialPortType::BluetoothPort => PortSummary {
            path: info.port_name,
            usb: None,
            description: "Bluetooth serial port".to_owned(),
        },
        serialport::SerialPortType::Unknown => PortSummary {
            path: info.port_name,
            usb: None,
            description: "serial port of unknown kind".to_owned(),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_refused_permission_says_how_to_get_access() {
        let denied = serialport::Error::new(
            serialport::ErrorKind::Io(io::ErrorKind::PermissionDenied),
            "Permission denied",
        );
        let message = open_failure("/dev/ttyUSB0", &denied).to_string();
        assert!(
            message.starts_with("cannot open serial port \"/dev/ttyUSB0\": Permission denied; "),
            "{message}"
        );
        for hint in [
            "`ls -l /dev/ttyUSB0`",
            "dialout",
            "sudo usermod -aG dialout $USER",
            "log out and in again",
            "udev rule",
            "docs/own-arm.md",
        ] {
            assert!(message.contains(hint), "{hint}: {message}");
        }
        // Any other reason is passed on as the system gave it, with no hint.
        let missing = serialport::Error::new(
            serialport::ErrorKind::Io(io::ErrorKind::NotFound),
            "No such file or directory",
        );
        assert_eq!(
            open_failure("/dev/ttyUSB9", &missing).to_string(),
            "cannot open serial port \"/dev/ttyUSB9\": No such file or directory"
        );
    }

    #[test]
    fn usb_ports_are_described_with_their_ids() {
        let summary = summarise(serialport::SerialPortInfo {
            port_name: "/dev/ttyACM0".to_owned(),
            port_type: serialport::SerialPortType::UsbPort(serialport::UsbPortInfo {
                vid: 0x1234,
                pid: 0x00AB,
                serial_number: Some("77".to_owned()),
                manufacturer: Some("Maker".to_owned()),
                product: Some("Board".to_owned()),
            }),
        });
        assert_eq!(summary.description, "Maker Board (USB 1234:00ab)");
        assert_eq!(
            summary.usb.map(|usb| (usb.vendor_id, usb.product_id)),
            Some((0x1234, 0xAB))
        );
    }

    #[test]
    fn listing_ports_does_not_fail_on_this_machine() {
        // A machine may have no serial ports at all; listing must still succeed.
        assert!(list_ports().is_ok());
    }
}
