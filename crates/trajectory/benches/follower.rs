//! Follower benchmarks: one tick for six joints, with the target held (the joints step along
//! their plans) and with the target moving every tick (every joint plans again, as while the
//! tool point is dragged).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use std::hint::black_box;

use armwright_test_support::seeded::XorShift;
use armwright_trajectory::{FollowJoint, Follower, JointLimits};
use criterion::{Criterion, criterion_group, criterion_main};

const JOINTS: usize = 6;
const PERIOD: f64 = 0.02;

fn joints(rng: &mut XorShift) -> Vec<FollowJoint> {
    (0..JOINTS)
        .map(|_| {
            let acceleration = rng.uniform(2.0, 40.0);
            FollowJoint {
                limits: JointLimits::new(rng.uniform(1.0, 6.0), acceleration, acceleration / 0.05),
                servo_speed: rng.uniform(3.0, 8.0),
                min: -2.5,
                max: 2.5,
            }
        })
        .collect()
}

fn bench_tick(c: &mut Criterion) {
    let mut rng = XorShift::new(0xF011_0001);
    let joints = joints(&mut rng);
    let start = vec![0.0; JOINTS];
    let far: Vec<f64> = (0..JOINTS).map(|_| rng.uniform(-2.0, 2.0)).collect();

    c.bench_function("follower_tick_6_joints_target_held", |b| {
        let mut follower = Follower::new(&joints, &start, 0.1, PERIOD).expect("follower");
        let mut toward_far = true;
        b.iter(|| {
            if follower.at_rest_on_target() {
                let target = if toward_far { &far } else { &start };
                toward_far = !toward_far;
                follower.set_target(target).expect("target");
            }
            black_box(follower.tick()[0])
        });
    });

    // A target that moves a little every tick, back and forth over the far pose.
    let path: Vec<Vec<f64>> = (0..500)
        .map(|k| {
            let s = (k as f64 * 0.02).sin();
            far.iter().map(|q| q * s).collect()
        })
        .collect();
    c.bench_function("follower_tick_6_joints_target_moving", |b| {
        let mut follower = Follower::new(&joints, &start, 0.1, PERIOD).expect("follower");
        let mut index = 0;
        b.iter(|| {
            follower
                .set_target(&path[index % path.len()])
                .expect("target");
            index += 1;
            black_box(follower.tick()[0])
        });
    });
}

criterion_group!(benches, bench_tick);
criterion_main!(benches);
