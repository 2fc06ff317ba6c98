//! Encoder and parser speed: encode a 6-channel setpoint (target ≤ 200 ns), parse a
//! setpoint line and a device status line (target ≤ 300 ns). Seeded inputs.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use std::hint::black_box;

use armwright_link::{ChannelValues, DeviceLine, HostLine, HostMessage};
use armwright_test_support::seeded::Lcg32;
use criterion::{Criterion, criterion_group, criterion_main};

/// Six pulse widths between 1000 and 2000 µs from a fixed linear congruential sequence.
fn seeded_setpoints(seed: u32, count: usize) -> Vec<ChannelValues> {
    let mut rng = Lcg32::new(seed);
    (0..count)
        .map(|_| {
            let mut values = [0u16; 6];
            for value in &mut values {
                *value = 1000 + (rng.next_u32() >> 16) as u16 % 1001;
            }
            ChannelValues::from_slice(&values).expect("six values")
        })
        .collect()
}

fn protocol(c: &mut Criterion) {
    let setpoints = seeded_setpoints(7, 64);
    let lines: Vec<_> = setpoints
        .iter()
        .enumerate()
        .map(|(seq, &values)| {
            HostLine {
                seq: seq as u8,
                message: HostMessage::Setpoint(values),
            }
            .encode()
        })
        .collect();
    let mut index = 0;
    c.bench_function("encode_setpoint_6_channels", |b| {
        b.iter(|| {
            index = (index + 1) % setpoints.len();
            black_box(HostLine {
                seq: index as u8,
                message: HostMessage::Setpoint(black_box(setpoints[index])),
            })
            .encode()
        })
    });
    c.bench_function("parse_setpoint_6_channels", |b| {
        b.iter(|| {
            index = (index + 1) % lines.len();
            HostLine::parse(black_box(lines[index].as_bytes()))
        })
    });
    let status = b"S04:X,06,2,1,3,0/1388\n";
    c.bench_function("parse_status", |b| {
        b.iter(|| DeviceLine::parse(black_box(status)))
    });
}

criterion_group!(benches, protocol);
criterion_main!(benches);
