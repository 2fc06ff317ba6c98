//! What the timeline plots: joint angle, velocity, acceleration and torque use of every joint,
//! commanded (the plan) and simulated (the dry run), and the tool point's deviation, against time.
//!
//! The plan and the dry run are looked at every [`GRID`] s and folded into at most
//! [`MAX_BUCKETS`] buckets, each keeping its smallest and largest value, so a plot of the whole
//! run never misses a peak and a long sequence costs the same to draw as a short one. Built on a
//! worker thread (`dry_run_job.rs`); the UI thread only reads it.
//!
//! The simulated acceleration and torque use are averaged over one pulse frame around each
//! instant: a servo sees a new command once per frame, and its drive swings hard within every
//! frame as the step in the command is taken up, which would otherwise paint the plot solid.

use armwright_kinematics::{Arm, JointKind, MAX_JOINTS, inverse_dynamics, tool_pose, torque_use};
use armwright_trajectory::{CommandedMotion, DryRun, JointState, TaskPlan};

/// Interval at which the plan and the dry run are looked at, in s (4 ms, the dry run's own
/// interval for the following error).
pub const GRID: f64 = 0.004;

/// Most buckets per series: about ten per pixel column of a wide plot.
pub const MAX_BUCKETS: usize = 8000;

/// What a plot shows against time.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Quantity {
    /// Joint position, in degrees (mm for a sliding joint).
    Angle,
    /// Joint velocity, in °/s (mm/s).
    Velocity,
    /// Joint acceleration, in °/s² (mm/s²).
    Acceleration,
    /// Torque use, in % of the derated rating.
    TorqueUse,
    /// Distance between the commanded and the simulated tool point, in mm.
    Deviation,
}

impl Quantity {
    /// Every quantity, in the order the selector shows them.
    pub const ALL: [Quantity; 5] = [
        Quantity::Angle,
        Quantity::Velocity,
        Quantity::Acceleration,
        Quantity::TorqueUse,
        Quantity::Deviation,
    ];

    /// Its name in the selector.
    pub fn label(self) -> &'static str {
        match self {
            Quantity::Angle => "joint angle",
            Quantity::Velocity => "velocity",
            Quantity::Acceleration => "acceleration",
            Quantity::TorqueUse => "torque use",
            Quantity::Deviation => "tool-point deviation",
        }
    }

    /// The value axis's label for the series shown: `turning` when a revolute joint is among
    /// them, `sliding` when a prismatic one is ("°" for turning joints only, "mm" for sliding
    /// ones only, both named when mixed).
    pub fn axis_label(self, turning: bool, sliding: bool) -> String {
        let (turn, slide) = match self {
            Quantity::Angle => ("°", "mm"),
            Quantity::Velocity => ("°/s", "mm/s"),
            Quantity::Acceleration => ("°/s²", "mm/s²"),
            Quantity::TorqueUse => return "% of rated".into(),
            Quantity::Deviation => return "mm".into(),
        };
        match (turning, sliding) {
            (true, true) => format!("{turn} (turning), {slide} (sliding)"),
            (false, true) => slide.into(),
            _ => turn.into(),
        }
    }

    /// Whether it has one series per joint (the deviation has one for the tool point).
    pub fn per_joint(self) -> bool {
        self != Quantity::Deviation
    }
}

/// One series folded into buckets: the smallest and largest value seen in each.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Series {
    /// Smallest value in each bucket, in the quantity's display unit.
    pub min: Vec<f32>,
    /// Largest value in each bucket.
    pub max: Vec<f32>,
}

impl Series {
    fn with_capacity(buckets: usize) -> Series {
        Series {
            min: Vec::with_capacity(buckets),
            max: Vec::with_capacity(buckets),
        }
    }

    /// Adds `value` to bucket `bucket` (the last one or a new one).
    fn push(&mut self, bucket: usize, value: f64) {
        let value = value as f32;
        if bucket < self.min.len() {
            self.min[bucket] = self.min[bucket].min(value);
            self.max[bucket] = self.max[bucket].max(value);
        } else {
            self.min.push(value);
            self.max.push(value);
        }
    }

    /// Number of buckets.
    pub fn len(&self) -> usize {
        self.min.len()
    }

    /// Whether it holds nothing.
    pub fn is_empty(&self) -> bool {
        self.min.is_empty()
    }
}

/// Every plotted series of one plan and its dry run.
#[derive(Debug, Clone, PartialEq)]
pub struct Traces {
    /// Width of one bucket, in s.
    pub bucket: f64,
    /// Time the plots span, in s: the plan and the tail the dry run watched after it.
    pub span: f64,
    /// Movable joints.
    pub joints: usize,
    /// The window the simulated acceleration and torque use are averaged over, in s.
    pub frame_period: f64,
    /// Commanded series: `[quantity][joint]` for the four per-joint quantities.
    commanded: Vec<Series>,
    /// Simulated series, laid out like `commanded`, then the deviation.
    simulated: Vec<Series>,
}

/// Converts a joint value in SI (rad-based or m-based) to the display unit (degree- or
/// mm-based): both are a plain scale, so rates and accelerations convert the same way.
fn display(kind: JointKind, value: f64) -> f64 {
    match kind {
        JointKind::Revolute => value.to_degrees(),
        JointKind::Prismatic => value * 1e3,
    }
}

fn slot(quantity: Quantity) -> Option<usize> {
    match quantity {
        Quantity::Angle => Some(0),
        Quantity::Velocity => Some(1),
        Quantity::Acceleration => Some(2),
        Quantity::TorqueUse => Some(3),
        Quantity::Deviation => None,
    }
}

impl Traces {
    /// The traces of `plan` and its dry run `run` on `arm`, with torque use against the rating
    /// times `derating` (share, 0–1], the simulated acceleration and torque use averaged over
    /// `frame_period` (s, the servo's pulse frame). Takes tens of ms for a sample scene: run it
    /// on a worker.
    pub fn of(
        arm: &Arm,
        plan: &TaskPlan,
        run: &DryRun,
        derating: f64,
        frame_period: f64,
    ) -> Traces {
        let n = arm.joint_count().min(MAX_JOINTS);
        let kinds: Vec<JointKind> = arm.joints().iter().map(|joint| joint.kind).collect();
        let trace = &run.trace;
        let samples = trace.len();
        let step = trace.step.max(1e-6);
        let stride = ((GRID / step).round() as usize).max(1);
        let half_frame = ((frame_period / 2.0 / step).round() as usize).max(1);
        let span = samples.saturating_sub(1) as f64 * step;
        let grid_points = samples.div_ceil(stride).max(1);
        let per_bucket = grid_points.div_ceil(MAX_BUCKETS).max(1);
        let buckets = grid_points.div_ceil(per_bucket);
        let mut commanded = vec![Series::with_capacity(buckets); 4 * n];
        let mut simulated = vec![Series::with_capacity(buckets); 4 * n + 1];
        let cycle = CommandedMotion::duration(plan);
        let derating = if derating > 0.0 { derating } else { 1.0 };
        let mut states = [JointState::default(); MAX_JOINTS];
        let mut positions = [0.0; MAX_JOINTS];
        let mut rates = [0.0; MAX_JOINTS];
        let mut accelerations = [0.0; MAX_JOINTS];
        for (grid_index, k) in (0..samples).step_by(stride).enumerate() {
            let bucket = grid_index / per_bucket;
            let t = (k as f64 * step).min(cycle);
            plan.states_at(t, &mut states[..n]);
            for j in 0..n {
                positions[j] = states[j].position;
                rates[j] = states[j].velocity;
                accelerations[j] = states[j].acceleration;
            }
            let payload = plan.payload_at(t);
            let commanded_use = inverse_dynamics(
                arm,
                &positions[..n],
                &rates[..n],
                &accelerations[..n],
                payload,
            )
            .map(|efforts| torque_use(arm, &efforts, derating));
            // The pulse frame around this instant, cut short at the ends of the run.
            let (from, to) = (
                k.saturating_sub(half_frame),
                (k + half_frame).min(samples - 1),
            );
            let interval = (to - from).max(1) as f64 * step;
            let actual = trace.actual_at(k);
            for j in 0..n {
                let kind = kinds[j];
                commanded[j].push(bucket, display(kind, positions[j]));
                commanded[n + j].push(bucket, display(kind, rates[j]));
                commanded[2 * n + j].push(bucket, display(kind, accelerations[j]));
                if let Ok(shares) = &commanded_use {
                    commanded[3 * n + j].push(bucket, shares.as_slice()[j] * 100.0);
                }
                let speed = trace.velocity[k * n + j];
                let speed_change = trace.velocity[to * n + j] - trace.velocity[from * n + j];
                simulated[j].push(bucket, display(kind, actual[j]));
                simulated[n + j].push(bucket, display(kind, speed));
                simulated[2 * n + j].push(bucket, display(kind, speed_change / interval));
                // The dry run's own measure, the motor effort (drive less back-EMF braking)
                // against the derated rating, as its mean over the frame.
                let drive: f64 = (from..=to)
                    .map(|sample| trace.effort_share[sample * n + j].abs())
                    .sum::<f64>()
                    / (to - from + 1) as f64;
                simulated[3 * n + j].push(bucket, drive / derating * 100.0);
            }
            let deviation = match (
                tool_pose(arm, trace.commanded_at(k)),
                tool_pose(arm, actual),
            ) {
                (Ok(commanded), Ok(actual)) => {
                    (commanded.translation.vector - actual.translation.vector).norm() * 1e3
                }
                _ => f64::NAN,
            };
            simulated[4 * n].push(bucket, deviation);
        }
        Traces {
            bucket: per_bucket as f64 * stride as f64 * step,
            span,
            joints: n,
            frame_period: 2.0 * half_frame as f64 * step,
            commanded,
            simulated,
        }
    }

    /// The commanded series of `quantity` for `joint`; `None` for the deviation (it has no
    /// commanded side) or a joint out of range.
    pub fn commanded(&self, quantity: Quantity, joint: usize) -> Option<&Series> {
        let slot = slot(quantity)?;
        (joint < self.joints)
            .then(|| self.commanded.get(slot * self.joints + joint))
            .flatten()
    }

    /// The simulated series of `quantity` for `joint` (ignored for the deviation).
    pub fn simulated(&self, quantity: Quantity, joint: usize) -> Option<&Series> {
        match slot(quantity) {
            Some(slot) if joint < self.joints => self.simulated.get(slot * self.joints + joint),
            Some(_) => None,
            None => self.simulated.get(4 * self.joints),
        }
    }
}

/// One pixel column (or one bucket, zoomed in) of a decimated series: its time and the smallest
/// and largest value under it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Column {
    /// Time, in s.
    pub x: f64,
    /// Smallest value, in the quantity's display unit.
    pub min: f64,
    /// Largest value.
    pub max: f64,
}

/// `series` over `x_range` (s) on a plot `columns` pixel columns wide: one column per bucket
/// while buckets are wider than a pixel column, else the smallest and largest value of the
/// buckets under each pixel column, so no peak is lost however far the plot is zoomed out. At
/// most `columns + 3` columns; buckets holding no number are left out.
pub fn decimate(series: &Series, bucket: f64, x_range: [f64; 2], columns: usize) -> Vec<Column> {
    let count = series.len();
    if count == 0 || bucket <= 0.0 || x_range[1] <= x_range[0] {
        return Vec::new();
    }
    let columns = columns.max(1);
    // One bucket either side, so the line runs to the edges.
    let first = ((x_range[0] / bucket).floor() as isize - 1).clamp(0, count as isize - 1) as usize;
    let last = ((x_range[1] / bucket).ceil() as isize + 1).clamp(0, count as isize - 1) as usize;
    let in_view = last - first + 1;
    let centre = |index: usize| (index as f64 + 0.5) * bucket;
    let per_column = if in_view <= columns {
        1.0
    } else {
        in_view as f64 / columns as f64
    };
    let mut out = Vec::with_capacity(columns.min(in_view) + 3);
    let mut start = first;
    let mut column = 0;
    while start <= last {
        column += 1;
        let end =
            (first + (column as f64 * per_column).round() as usize).clamp(start + 1, last + 1);
        let mut low = f32::INFINITY;
        let mut high = f32::NEG_INFINITY;
        for index in start..end {
            // `min`/`max` skip NaN: a bucket without a number adds nothing.
            low = low.min(series.min[index]);
            high = high.max(series.max[index]);
        }
        if low <= high {
            out.push(Column {
                x: (centre(start) + centre(end - 1)) / 2.0,
                min: f64::from(low),
                max: f64::from(high),
            });
        }
        start = end;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::editor::sample::sample_scene;
    use crate::scene::build_arm;
    use crate::task::{dry_run_of, plan_of};

    #[test]
    fn a_short_run_keeps_every_grid_point_of_the_plan_and_the_dry_run() {
        let scene = sample_scene();
        let arm = build_arm(&scene.arm).expect("sample arm");
        let plan = plan_of(&scene, &arm).expect("sample plans");
        let run = dry_run_of(&scene, &arm, &plan).expect("sample runs");
        let traces = Traces::of(&arm, &plan, &run, 1.0, 0.02);
        // A few seconds fit in far fewer than MAX_BUCKETS: one grid point per bucket.
        assert!((traces.bucket - GRID).abs() < 1e-12, "{}", traces.bucket);
        let angle = traces.commanded(Quantity::Angle, 1).expect("shoulder");
        let simulated = traces.simulated(Quantity::Angle, 1).expect("shoulder");
        let stride = (GRID / run.trace.step).round() as usize;
        let mut positions = vec![0.0; arm.joint_count()];
        for index in [0, angle.len() / 3, angle.len() - 1] {
            assert_eq!(angle.min[index], angle.max[index]);
            let t = (index as f64 * GRID).min(CommandedMotion::duration(&plan));
            plan.positions_at(t, &mut positions);
            assert!((f64::from(angle.min[index]) - positions[1].to_degrees()).abs() < 1e-3);
            let actual = run.trace.actual_at(index * stride)[1].to_degrees();
            assert!((f64::from(simulated.min[index]) - actual).abs() < 1e-3);
        }
        // The tool point's deviation is there for the whole run, never negative.
        let deviation = traces.simulated(Quantity::Deviation, 0).expect("deviation");
        assert_eq!(deviation.len(), angle.len());
        assert!(deviation.min.iter().all(|d| *d >= 0.0));
        assert!(traces.commanded(Quantity::Deviation, 0).is_none());
    }

    fn series(values: &[f32]) -> Series {
        Series {
            min: values.to_vec(),
            max: values.to_vec(),
        }
    }

    #[test]
    fn a_bucket_keeps_its_extremes() {
        let mut folded = Series::default();
        for (bucket, value) in [(0, 2.0), (0, -1.0), (0, 5.0), (1, 3.0)] {
            folded.push(bucket, value);
        }
        assert_eq!(folded.min, vec![-1.0, 3.0]);
        assert_eq!(folded.max, vec![5.0, 3.0]);
    }

    #[test]
    fn zoomed_out_a_spike_survives_and_the_column_count_is_bounded() {
        let mut values = vec![0.0_f32; 10_000];
        values[6_789] = 42.0;
        let columns = decimate(&series(&values), 0.004, [0.0, 40.0], 300);
        assert!(columns.len() <= 300 + 3, "{}", columns.len());
        let top = columns.iter().map(|c| c.max).fold(f64::MIN, f64::max);
        assert_eq!(top, 42.0);
        // The spike sits in the column around its own time (6789.5 × 4 ms ≈ 27.16 s).
        let at = columns.iter().find(|c| c.max == 42.0).map(|c| c.x);
        assert!(
            at.is_some_and(|x| (x - 27.158).abs() < 40.0 / 300.0),
            "{at:?}"
        );
        assert!(columns.iter().all(|c| c.min == 0.0));
    }

    #[test]
    fn zoomed_in_every_bucket_is_a_column() {
        let values: Vec<f32> = (0..100).map(|i| i as f32).collect();
        let columns = decimate(&series(&values), 0.01, [0.2, 0.3], 500);
        // Buckets 19 to 31: the view plus one either side.
        assert_eq!(columns.len(), 13);
        let (first, last) = (columns[0], columns[12]);
        assert!((first.x - 0.195).abs() < 1e-12 && first.min == 19.0 && first.max == 19.0);
        assert!((last.x - 0.315).abs() < 1e-12 && last.max == 31.0);
    }

    #[test]
    fn buckets_without_a_number_are_left_out() {
        let values = [1.0, f32::NAN, 3.0];
        let columns = decimate(&series(&values), 1.0, [0.0, 3.0], 10);
        assert_eq!(
            columns.iter().map(|c| c.max).collect::<Vec<_>>(),
            vec![1.0, 3.0]
        );
    }
}
