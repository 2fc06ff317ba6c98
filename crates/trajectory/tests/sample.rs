//! Setpoints from a plan at a fixed rate: count, ends, order, and the allowed rates.

use armwright_trajectory::{
    JointLimits, MAX_SAMPLE_RATE_HZ, MIN_SAMPLE_RATE_HZ, ProfileShape, SequenceError,
    SequenceWaypoint, WaypointKind, plan_sequence,
};

fn waypoint(positions: &[f64], kind: WaypointKind) -> SequenceWaypoint {
    SequenceWaypoint {
        positions: positions.to_vec(),
        kind,
        speed_share: 1.0,
    }
}

const STOP: WaypointKind = WaypointKind::Stop { dwell: 0.0 };

fn arm_limits() -> Vec<JointLimits> {
    vec![
        JointLimits::new(3.0, 12.0, 120.0),
        JointLimits::new(2.0, 8.0, 80.0),
        JointLimits::new(2.5, 10.0, 150.0),
    ]
}

#[test]
fn the_sampler_covers_the_plan_at_the_asked_rate() {
    let limits = arm_limits();
    let waypoints = [
        waypoint(&[0.0, 0.0, 0.0], STOP),
        waypoint(&[0.3, -0.2, 0.1], WaypointKind::PassThrough),
        waypoint(&[0.6, -0.5, 0.4], STOP),
    ];
    let plan = plan_sequence(ProfileShape::DoubleS, &waypoints, &limits).expect("ok");
    for rate_hz in [50.0, 333.0, 1000.0] {
        let samples: Vec<_> = plan.sampler(rate_hz).expect("in range").collect();
        let expected = (plan.duration() * rate_hz).ceil() as usize + 1;
        assert_eq!(samples.len(), expected);
        assert_eq!(samples[0].time, 0.0);
        assert_eq!(samples[0].positions[..3], [0.0, 0.0, 0.0]);
        let last = samples.last().expect("samples");
        assert_eq!(last.time, plan.duration());
        assert_eq!(last.positions[..3], [0.6, -0.5, 0.4]);
        assert!(samples.windows(2).all(|w| w[1].time > w[0].time));
    }
    assert!(plan.sampler(MIN_SAMPLE_RATE_HZ).is_ok() && plan.sampler(MAX_SAMPLE_RATE_HZ).is_ok());
    for bad in [49.9, 1000.1, f64::NAN, 0.0] {
        assert!(matches!(
            plan.sampler(bad),
            Err(SequenceError::RateOutOfRange { .. })
        ));
    }
}
