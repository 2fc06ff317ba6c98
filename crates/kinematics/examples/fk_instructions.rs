//! Forward kinematics in a plain loop, for counting instructions under callgrind: a figure that
//! a loaded machine does not move, unlike criterion's times.
//!
//! Build with `cargo build --release -p armwright-kinematics --example fk_instructions`, then
//! run `valgrind --tool=callgrind target/release/examples/fk_instructions WHAT CHAIN CALLS`
//! twice, with CALLS 100000 and 200000: the difference of the two instruction totals over
//! 100 000 is one call, the loop included. WHAT is `tool_pose`, `tool_jacobian` or `forward`;
//! CHAIN is `six`, the random 6-joint chain of the `fk_6_joints` bench (seed 8), or `five`, the
//! 5-joint articulated arm of `tool_pose_5_joints` (seed 7). Every result goes through
//! `black_box`, so nothing of the call is left out.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_kinematics::{Arm, forward, tool_jacobian, tool_pose};
use armwright_test_support::arms as common;
use std::hint::black_box;

const USAGE: &str = "usage: fk_instructions tool_pose|tool_jacobian|forward six|five CALLS";

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let [what, chain, calls] = args.as_slice() else {
        eprintln!("{USAGE}");
        std::process::exit(2);
    };
    let Ok(calls) = calls.parse::<usize>() else {
        eprintln!("CALLS must be a whole number, not {calls:?}\n{USAGE}");
        std::process::exit(2);
    };
    let (arm, poses) = match chain.as_str() {
        "six" => {
            let mut rng = common::Seeded::new(8);
            let arm = common::random_chain(&mut rng, 6);
            let poses: Vec<Vec<f64>> = (0..64).map(|_| rng.pose(&arm)).collect();
            (arm, poses)
        }
        "five" => {
            let arm: Arm = common::articulated(true);
            let mut rng = common::Seeded::new(7);
            let poses: Vec<Vec<f64>> = (0..64).map(|_| rng.pose(&arm)).collect();
            (arm, poses)
        }
        other => {
            eprintln!("CHAIN must be six or five, not {other:?}\n{USAGE}");
            std::process::exit(2);
        }
    };
    let pose = |call: usize| black_box(poses[call % poses.len()].as_slice());
    match what.as_str() {
        "tool_pose" => (0..calls).for_each(|call| {
            black_box(tool_pose(black_box(&arm), pose(call)).expect("in-limit pose"));
        }),
        "tool_jacobian" => (0..calls).for_each(|call| {
            black_box(tool_jacobian(black_box(&arm), pose(call)).expect("in-limit pose"));
        }),
        "forward" => (0..calls).for_each(|call| {
            black_box(forward(black_box(&arm), pose(call)).expect("in-limit pose"));
        }),
        other => {
            eprintln!("WHAT must be tool_pose, tool_jacobian or forward, not {other:?}\n{USAGE}");
            std::process::exit(2);
        }
    }
}
