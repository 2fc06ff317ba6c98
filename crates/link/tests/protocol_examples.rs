//! Every example line of `PROTOCOL.md`, checked verbatim: it appears in the spec, it
//! parses to the message the spec describes, and encoding that message gives it back.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_link::{
    Ack, AckOutcome, ChannelOutput, ChannelValues, DeviceInfo, DeviceLine, DeviceMessage,
    DeviceMode, DeviceStatus, Faults, FirmwareVersion, HostLine, HostMessage, LineErrorKind,
    crc16_ccitt_false,
};

const SPEC: &str = include_str!("../PROTOCOL.md");

fn values(values: &[u16]) -> ChannelValues {
    ChannelValues::from_slice(values).expect("1 to 8 values")
}

fn planned(values: &[Option<u16>]) -> ChannelOutput {
    ChannelOutput::from_slice(values).expect("1 to 8 values")
}

fn host_examples() -> Vec<(&'static str, HostLine)> {
    let line = |seq, message| HostLine { seq, message };
    vec![
        (
            "h00:1/2F9D",
            line(
                0x00,
                HostMessage::Greeting {
                    protocol_version: 1,
                },
            ),
        ),
        (
            "s01:05DC05DC05DC05DC05DC05DC/E8F5",
            line(0x01, HostMessage::Setpoint(values(&[1500; 6]))),
        ),
        (
            "s02:0BB80BB80BB80BB80BB80BB80BB8/5986",
            line(0x02, HostMessage::Setpoint(values(&[3000; 7]))),
        ),
        ("k03/A4A3", line(0x03, HostMessage::Hold)),
        ("l04/51D4", line(0x04, HostMessage::Release)),
        ("x05/DE56", line(0x05, HostMessage::EmergencyStop)),
        ("c06/5DA7", line(0x06, HostMessage::Reset)),
        ("b07/7AB6", line(0x07, HostMessage::Heartbeat)),
        ("q08/916A", line(0x08, HostMessage::OutputQuery)),
        (
            "r09:20/447C",
            line(0x09, HostMessage::ReadingsRate { rate_hz: 20 }),
        ),
        (
            "r0A:0/9270",
            line(0x0A, HostMessage::ReadingsRate { rate_hz: 0 }),
        ),
        (
            "h00:3/0FDF",
            line(
                0x00,
                HostMessage::Greeting {
                    protocol_version: 3,
                },
            ),
        ),
        (
            "p0B:05DC05DC----05DC05DC05DC/E329",
            line(
                0x0B,
                HostMessage::Planned(planned(&[
                    Some(1500),
                    Some(1500),
                    None,
                    Some(1500),
                    Some(1500),
                    Some(1500),
                ])),
            ),
        ),
        (
            "p0B:05DC05DC----05DC05DC05DC05DC/BC72",
            line(
                0x0B,
                HostMessage::Planned(planned(&[
                    Some(1500),
                    Some(1500),
                    None,
                    Some(1500),
                    Some(1500),
                    Some(1500),
                    Some(1500),
                ])),
            ),
        ),
        (
            "h00:2/1FFE",
            line(
                0x00,
                HostMessage::Greeting {
                    protocol_version: 2,
                },
            ),
        ),
    ]
}

fn greeting(seq: u8) -> DeviceLine {
    greeting_v(seq, 1, "0.1.0")
}

fn greeting_v(seq: u8, protocol_version: u8, firmware: &str) -> DeviceLine {
    DeviceLine {
        seq,
        message: DeviceMessage::Greeting(DeviceInfo {
            protocol_version,
            firmware: FirmwareVersion::new(firmware).expect("valid version"),
            channel_count: 7,
            pulse_unit_ns: 500,
            min_pulse_units: 1000,
            max_pulse_units: 5000,
            frame_period_us: 20000,
        }),
    }
}

fn ack(seq: u8, acked_seq: u8, room: u8, outcome: AckOutcome) -> DeviceLine {
    DeviceLine {
        seq,
        message: DeviceMessage::Ack(Ack {
            acked_seq,
            room,
            outcome,
        }),
    }
}

fn status(seq: u8, mode: DeviceMode, faults: u8, counters: [u16; 4]) -> DeviceLine {
    DeviceLine {
        seq,
        message: DeviceMessage::Status(DeviceStatus {
            mode,
            faults: Faults(faults),
            bad_checksums: counters[0],
            bad_lines: counters[1],
            clamped_values: counters[2],
            watchdog_trips: counters[3],
        }),
    }
}

fn device_examples() -> Vec<(&'static str, DeviceLine)> {
    vec![
        ("H00:1,0.1.0,7,500,1000,5000,20000/837D", greeting(0x00)),
        ("H01:1,0.1.0,7,500,1000,5000,20000/0D54", greeting(0x01)),
        ("A00:00,4,ok/E052", ack(0x00, 0x00, 4, AckOutcome::Accepted)),
        (
            "A01:01,3,clamped/F8DA",
            ack(0x01, 0x01, 3, AckOutcome::Clamped),
        ),
        (
            "A02:06,4,refused/8A77",
            ack(0x02, 0x06, 4, AckOutcome::Refused),
        ),
        ("A02:02,4,ok/AD75", ack(0x02, 0x02, 4, AckOutcome::Accepted)),
        ("A03:05,4,ok/8E17", ack(0x03, 0x05, 4, AckOutcome::Accepted)),
        (
            "S03:D,00,0,0,0,0/8BC8",
            status(0x03, DeviceMode::Driving, 0x00, [0; 4]),
        ),
        (
            "S04:X,06,2,1,3,0/1388",
            status(0x04, DeviceMode::Stopped, 0x06, [2, 1, 3, 0]),
        ),
        (
            "S04:X,02,0,0,0,0/1C85",
            status(0x04, DeviceMode::Stopped, 0x02, [0; 4]),
        ),
        (
            "V05:1FF3A0000FFF/4196",
            DeviceLine {
                seq: 0x05,
                message: DeviceMessage::Analog(values(&[0x1FF, 0x3A0, 0x000, 0xFFF])),
            },
        ),
        (
            "V0C:7FF5A3C0C80011EFFF/7CC6",
            DeviceLine {
                seq: 0x0C,
                message: DeviceMessage::Analog(values(&[2047, 1443, 3084, 2048, 286, 4095])),
            },
        ),
        ("A0B:09,3,ok/9421", ack(0x0B, 0x09, 3, AckOutcome::Accepted)),
        (
            "H01:3,0.3.0,7,500,1000,5000,20000/77D1",
            greeting_v(0x01, 3, "0.3.0"),
        ),
        (
            "H01:2,0.2.0,7,500,1000,5000,20000/C283",
            greeting_v(0x01, 2, "0.2.0"),
        ),
        (
            "P09:0BB80BB80BB80BB80BB80BB80BB8/783E",
            output(0x09, &[Some(3000); 7]),
        ),
        (
            "P0A:----------------------------/F220",
            output(0x0A, &[None; 7]),
        ),
        (
            "P0B:05DC05DC05DC05DC05DC----/6351",
            output(
                0x0B,
                &[
                    Some(1500),
                    Some(1500),
                    Some(1500),
                    Some(1500),
                    Some(1500),
                    None,
                ],
            ),
        ),
    ]
}

fn output(seq: u8, values: &[Option<u16>]) -> DeviceLine {
    DeviceLine {
        seq,
        message: DeviceMessage::Output(ChannelOutput::from_slice(values).expect("1 to 8 channels")),
    }
}

#[test]
fn host_examples_are_in_the_spec_and_parse_and_encode_verbatim() {
    for (text, expected) in host_examples() {
        assert!(SPEC.contains(text), "{text} is not in PROTOCOL.md");
        assert_eq!(HostLine::parse(text.as_bytes()), Ok(expected), "{text}");
        assert_eq!(expected.encode().as_str(), format!("{text}\n"));
    }
}

#[test]
fn device_examples_are_in_the_spec_and_parse_and_encode_verbatim() {
    for (text, expected) in device_examples() {
        assert!(SPEC.contains(text), "{text} is not in PROTOCOL.md");
        assert_eq!(DeviceLine::parse(text.as_bytes()), Ok(expected), "{text}");
        assert_eq!(expected.encode().as_str(), format!("{text}\n"));
    }
}

#[test]
fn spec_states_the_crc_check_value_the_code_computes() {
    // Catalogue of parametrised CRC algorithms, CRC-16/IBM-3740 (alias CRC-16/CCITT-FALSE):
    // check=0x29b1 for the nine ASCII bytes "123456789".
    assert_eq!(crc16_ccitt_false(b"123456789"), 0x29B1);
    assert!(SPEC.contains("| 16    | 0x1021 | 0xFFFF | false | false  | 0x0000 | 0x29B1"));
}

#[test]
fn spec_sizes_hold_for_setpoint_frames() {
    // §7: 6 channels → 34 bytes, 7 → 38, 8 → 42, all with the line feed.
    for (channels, bytes) in [(6usize, 34usize), (7, 38), (8, 42)] {
        let line = HostLine {
            seq: 0xFF,
            message: HostMessage::Setpoint(values(&vec![0xFFFF; channels])),
        };
        assert_eq!(line.encode().len(), bytes, "{channels} channels");
        // 115 200 baud, 8N1 = 10 bits a byte → 11 520 bytes/s (common practice).
        let frames_per_second = 115_200 / 10 / line.encode().len();
        assert!(
            channels > 7 || frames_per_second >= 250,
            "{channels} channels"
        );
    }
}

#[test]
fn spec_size_holds_for_a_six_input_readings_line() {
    // §4 and §7: six readings → 28 bytes with the line feed.
    let line = DeviceLine {
        seq: 0xFF,
        message: DeviceMessage::Analog(values(&[0xFFF; 6])),
    };
    assert_eq!(line.encode().len(), 28);
    assert!(SPEC.contains("A readings line of six inputs is 28 bytes"));
}

#[test]
fn carriage_return_before_the_line_feed_is_ignored() {
    assert_eq!(
        HostLine::parse(b"x05/DE56\r\n").map(|line| line.message),
        Ok(HostMessage::EmergencyStop)
    );
}

#[test]
fn a_changed_byte_is_a_checksum_mismatch() {
    let error = HostLine::parse(b"s01:05DC05DC05DC05DC05DC05DD/E8F5\n").expect_err("altered");
    assert!(error.is_checksum_mismatch());
    assert_eq!(
        error.to_string(),
        format!(
            "check is E8F5 but the line's CRC is {:04X} at byte 29 of \"s01:05DC05DC05DC05DC05DC05DD/E8F5\"",
            crc16_ccitt_false(b"s01:05DC05DC05DC05DC05DC05DD")
        )
    );
}

#[test]
fn a_truncated_line_is_missing_its_check() {
    let error = HostLine::parse(b"s01:05DC05DC05DC05\n").expect_err("truncated");
    assert_eq!(error.kind, LineErrorKind::MissingCheck);
    assert!(!error.is_checksum_mismatch());
}

#[test]
fn an_overlong_line_is_refused() {
    let long = [b'b'; 70];
    let error = HostLine::parse(&long).expect_err("overlong");
    assert_eq!(error.kind, LineErrorKind::TooLong { len: 71 });
}

#[test]
fn an_output_field_is_four_hex_digits_or_four_dashes() {
    for bad in [
        "P00:05DC---",
        "P00:05DC--5D",
        "P00:05dc",
        "P00:",
        "P00:----05DC-",
    ] {
        let line = format!("{bad}/{:04X}\n", crc16_ccitt_false(bad.as_bytes()));
        assert!(
            DeviceLine::parse(line.as_bytes()).is_err(),
            "{bad} must not parse"
        );
    }
}
