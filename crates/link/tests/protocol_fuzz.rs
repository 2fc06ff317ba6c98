//! Properties of the encoder and parser: every message survives a round trip, and no byte
//! sequence panics the parsers or yields a message whose check did not match.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_link::{
    Ack, AckOutcome, ChannelOutput, ChannelValues, DeviceInfo, DeviceLine, DeviceMessage,
    DeviceMode, DeviceStatus, Faults, FirmwareVersion, HostLine, HostMessage, LineAssembler,
    crc16_ccitt_false,
};
use proptest::prelude::*;

fn channel_values(max: u16) -> impl Strategy<Value = ChannelValues> {
    proptest::collection::vec(0..=max, 1..=8)
        .prop_map(|values| ChannelValues::from_slice(&values).expect("1 to 8 values"))
}

fn host_message() -> impl Strategy<Value = HostMessage> {
    prop_oneof![
        (1u8..=255).prop_map(|protocol_version| HostMessage::Greeting { protocol_version }),
        channel_values(u16::MAX).prop_map(HostMessage::Setpoint),
        Just(HostMessage::Hold),
        Just(HostMessage::Release),
        Just(HostMessage::EmergencyStop),
        Just(HostMessage::Reset),
        Just(HostMessage::Heartbeat),
        Just(HostMessage::OutputQuery),
        (0u8..=100).prop_map(|rate_hz| HostMessage::ReadingsRate { rate_hz }),
        planned_frame().prop_map(HostMessage::Planned),
    ]
}

/// 1 to 8 channels, each a width or no pulse, at least one with a width.
fn planned_frame() -> impl Strategy<Value = ChannelOutput> {
    (
        proptest::collection::vec(proptest::option::of(any::<u16>()), 1..=8),
        any::<u16>(),
        any::<prop::sample::Index>(),
    )
        .prop_map(|(mut values, width, at)| {
            let at = at.index(values.len());
            values[at] = Some(width);
            ChannelOutput::from_slice(&values).expect("1 to 8 channels")
        })
}

fn device_info() -> impl Strategy<Value = DeviceInfo> {
    (
        1u8..=255,
        "[0-9A-Za-z.+-]{1,12}",
        1u8..=8,
        1u16..,
        any::<u16>(),
        any::<u16>(),
        1u16..,
    )
        .prop_map(
            |(version, firmware, channels, unit, a, b, period)| DeviceInfo {
                protocol_version: version,
                firmware: FirmwareVersion::new(&firmware).expect("generated from the allowed set"),
                channel_count: channels,
                pulse_unit_ns: unit,
                min_pulse_units: a.min(b),
                max_pulse_units: a.max(b),
                frame_period_us: period,
            },
        )
}

fn device_message() -> impl Strategy<Value = DeviceMessage> {
    let outcome = prop_oneof![
        Just(AckOutcome::Accepted),
        Just(AckOutcome::Clamped),
        Just(AckOutcome::Refused)
    ];
    let mode = prop_oneof![
        Just(DeviceMode::Limp),
        Just(DeviceMode::Driving),
        Just(DeviceMode::Keeping),
        Just(DeviceMode::Stopped)
    ];
    prop_oneof![
        device_info().prop_map(DeviceMessage::Greeting),
        (any::<u8>(), 0u8..=99, outcome).prop_map(|(acked_seq, room, outcome)| {
            DeviceMessage::Ack(Ack {
                acked_seq,
                room,
                outcome,
            })
        }),
        (mode, any::<u8>(), any::<[u16; 4]>()).prop_map(|(mode, faults, c)| {
            DeviceMessage::Status(DeviceStatus {
                mode,
                faults: Faults(faults),
                bad_checksums: c[0],
                bad_lines: c[1],
                clamped_values: c[2],
                watchdog_trips: c[3],
            })
        }),
        channel_values(0xFFF).prop_map(DeviceMessage::Analog),
        proptest::collection::vec(proptest::option::of(any::<u16>()), 1..=8).prop_map(|values| {
            DeviceMessage::Output(ChannelOutput::from_slice(&values).expect("1 to 8 channels"))
        }),
    ]
}

/// Whether `raw` ends in "/XXXX" (optionally with CR/LF) and XXXX is the CRC of what precedes.
fn check_matches(raw: &[u8]) -> bool {
    let content = raw.strip_suffix(b"\n").unwrap_or(raw);
    let content = content.strip_suffix(b"\r").unwrap_or(content);
    let Some(slash) = content.len().checked_sub(5) else {
        return false;
    };
    let Ok(digits) = std::str::from_utf8(&content[slash + 1..]) else {
        return false;
    };
    content[slash] == b'/'
        && u16::from_str_radix(digits, 16).ok() == Some(crc16_ccitt_false(&content[..slash]))
}

proptest! {
    #[test]
    fn host_lines_round_trip(seq in any::<u8>(), message in host_message()) {
        let line = HostLine { seq, message };
        let encoded = line.encode();
        prop_assert!(encoded.len() <= 64);
        prop_assert_eq!(HostLine::parse(encoded.as_bytes()), Ok(line));
    }

    #[test]
    fn device_lines_round_trip(seq in any::<u8>(), message in device_message()) {
        let line = DeviceLine { seq, message };
        let encoded = line.encode();
        prop_assert!(encoded.len() <= 64);
        prop_assert_eq!(DeviceLine::parse(encoded.as_bytes()), Ok(line));
    }

    #[test]
    fn arbitrary_bytes_never_panic_nor_pass_a_wrong_check(
        bytes in proptest::collection::vec(any::<u8>(), 0..100)
    ) {
        if HostLine::parse(&bytes).is_ok() {
            prop_assert!(check_matches(&bytes));
        }
        if DeviceLine::parse(&bytes).is_ok() {
            prop_assert!(check_matches(&bytes));
        }
    }

    #[test]
    fn altered_lines_never_parse_with_a_wrong_check(
        seq in any::<u8>(),
        message in host_message(),
        position in any::<prop::sample::Index>(),
        byte in 0x20u8..=0x7E,
    ) {
        let encoded = HostLine { seq, message }.encode();
        let mut bytes = encoded.as_bytes().to_vec();
        let at = position.index(bytes.len() - 1);
        bytes[at] = byte;
        if let Ok(parsed) = HostLine::parse(&bytes) {
            prop_assert!(check_matches(&bytes));
            if bytes == encoded.as_bytes() {
                prop_assert_eq!(parsed, HostLine { seq, message });
            }
        }
    }

    #[test]
    fn assembled_random_streams_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..400)) {
        let mut assembler = LineAssembler::new();
        for byte in bytes {
            if let armwright_link::Assembled::Line(line) = assembler.push(byte) {
                prop_assert!(line.len() < 64);
                let _ = HostLine::parse(line);
                let _ = DeviceLine::parse(line);
            }
        }
    }
}

proptest! {
    #[test]
    fn readings_rates_parse_exactly_within_the_limit(rate in 0u32..100_000) {
        let body = format!("r3C:{rate}");
        let line = format!("{body}/{:04X}", crc16_ccitt_false(body.as_bytes()));
        match HostLine::parse(line.as_bytes()) {
            Ok(parsed) => {
                prop_assert!(rate <= 100);
                prop_assert_eq!(parsed.message, HostMessage::ReadingsRate { rate_hz: rate as u8 });
            }
            Err(_) => prop_assert!(rate > 100),
        }
    }

    #[test]
    fn planned_bodies_parse_only_with_a_width_somewhere(
        fields in proptest::collection::vec(proptest::option::of(any::<u16>()), 1..=8)
    ) {
        let mut body = "p3C:".to_owned();
        for field in &fields {
            match field {
                Some(units) => body.push_str(&format!("{units:04X}")),
                None => body.push_str("----"),
            }
        }
        let line = format!("{body}/{:04X}", crc16_ccitt_false(body.as_bytes()));
        match HostLine::parse(line.as_bytes()) {
            Ok(parsed) => {
                prop_assert!(fields.iter().any(Option::is_some));
                let expected = ChannelOutput::from_slice(&fields).expect("1 to 8 channels");
                prop_assert_eq!(parsed.message, HostMessage::Planned(expected));
            }
            Err(_) => prop_assert!(fields.iter().all(Option::is_none)),
        }
    }

    #[test]
    fn altered_readings_lines_never_parse_with_a_wrong_check(
        seq in any::<u8>(),
        readings in channel_values(0xFFF),
        position in any::<prop::sample::Index>(),
        byte in 0x20u8..=0x7E,
    ) {
        let line = DeviceLine { seq, message: DeviceMessage::Analog(readings) };
        let encoded = line.encode();
        let mut bytes = encoded.as_bytes().to_vec();
        let at = position.index(bytes.len() - 1);
        bytes[at] = byte;
        if let Ok(parsed) = DeviceLine::parse(&bytes) {
            prop_assert!(check_matches(&bytes));
            if bytes == encoded.as_bytes() {
                prop_assert_eq!(parsed, line);
            }
        }
    }

    #[test]
    fn altered_output_lines_never_parse_with_a_wrong_check(
        seq in any::<u8>(),
        values in proptest::collection::vec(proptest::option::of(any::<u16>()), 1..=8),
        position in any::<prop::sample::Index>(),
        byte in prop_oneof![Just(b'-'), 0x20u8..=0x7E],
    ) {
        let output = ChannelOutput::from_slice(&values).expect("1 to 8 channels");
        let line = DeviceLine { seq, message: DeviceMessage::Output(output) };
        let encoded = line.encode();
        let mut bytes = encoded.as_bytes().to_vec();
        let at = position.index(bytes.len() - 1);
        bytes[at] = byte;
        if let Ok(parsed) = DeviceLine::parse(&bytes) {
            prop_assert!(check_matches(&bytes));
            if bytes == encoded.as_bytes() {
                prop_assert_eq!(parsed, line);
            }
        }
    }
}
