//! The timeline: one plot at a time of joint angle, velocity, acceleration, torque use or the
//! tool point's deviation against time, commanded and simulated overlaid, waypoints marked; a
//! time cursor to drag or click; play, pause, speed and what happens at the end.
//!
//! Each series is decimated to one column per two pixels (the smallest and largest value under
//! it), kept until the view, the quantity or the data change, and drawn as one band of triangles
//! from column to column rather than as a stroked line, so a sequence of hundreds of waypoints
//! costs no more to draw than a short one.
//!
//! While a device is connected and has said what it sends, the approach the next stream would
//! start with ([`crate::approach`]) is drawn before time 0 as its own shaded segment, commanded
//! and dry run (the approach's plan through the same servo model, from the arm at rest where
//! the approach starts), so the move from where the device holds the arm to the first waypoint
//! is seen before it is made.

use std::ops::RangeInclusive;

use armwright_link::{ChannelOutput, DeviceInfo};
use armwright_trajectory::CommandedMotion;
use egui::{
    Align2, Button, Color32, ComboBox, DragValue, FontId, Mesh, Rect, RichText, Shape, Ui, pos2,
    vec2,
};
use egui_plot::{
    AxisHints, Plot, PlotBounds, PlotGeometry, PlotItem, PlotItemBase, PlotTransform,
    uniform_grid_spacer,
};

use crate::approach::{StartFrom, WakeMode, approach_of, approach_start_waking};
use crate::editor::command::Command;
use crate::editor::dry_run_marks;
use crate::editor::playback::{AtEnd, DryRunStatus, PlaybackCommand, SPEEDS, Timeline};
use crate::editor::state::EditorState;
use crate::editor::traces::{Column, Quantity, Traces, decimate};
use crate::task::{dry_run_of, dry_run_options_of};

/// Joint colours, from the Okabe–Ito palette (distinguishable for the common kinds of colour
/// blindness; common practice in scientific figures), blue last as it is darkest on the plot.
const JOINT_COLOURS: [Color32; 7] = [
    Color32::from_rgb(230, 159, 0),
    Color32::from_rgb(86, 180, 233),
    Color32::from_rgb(0, 158, 115),
    Color32::from_rgb(240, 228, 66),
    Color32::from_rgb(204, 121, 167),
    Color32::from_rgb(213, 94, 0),
    Color32::from_rgb(0, 114, 178),
];

/// The time cursor.
const CURSOR: Color32 = Color32::from_rgb(255, 255, 255);
/// Waypoint marks.
const MARK: Color32 = Color32::from_rgb(150, 150, 160);
/// The approach segment's shading and name.
const APPROACH: Color32 = Color32::from_rgb(120, 170, 255);

/// Columns each approach line is decimated to: finer than the shaded segment is wide on any
/// usual window, however short the sequence after it.
const APPROACH_COLUMNS: usize = 400;
/// Error text.
const ERROR: Color32 = Color32::from_rgb(255, 90, 60);

/// Pixels per decimated column: two keeps lines smooth and halves the triangles to draw.
const COLUMN_WIDTH: f32 = 2.0;

/// Thickness of a commanded line and of a simulated band's edges, in points.
const COMMANDED_WIDTH: f32 = 1.5;
const SIMULATED_WIDTH: f32 = 5.0;

/// Least distance between two drawn waypoint marks, in points.
const MARK_SPACING: f32 = 3.0;

/// Least gap between two waypoint names on the plot, in points; a name that would run into the
/// one before is left out (its mark stays).
const NAME_GAP: f32 = 8.0;

/// The plot's decimated lines and where it was drawn, kept between frames.
#[derive(Default)]
pub struct TimelinePlot {
    key: Option<LinesKey>,
    /// Commanded and simulated columns per line, with the line's joint (`None` for the tool
    /// point).
    lines: Vec<PlotLine>,
    transform: Option<PlotTransform>,
    /// What the connected device last said it sends, and what it is.
    device: Option<(ChannelOutput, DeviceInfo)>,
    /// How a stream on the connected link wakes a limp arm.
    wake: WakeMode,
    /// The approach the next stream would start with, for the device and timeline it was
    /// planned for.
    approach: Option<ApproachTrace>,
}

/// The approach from what the device sends to the first waypoint: its plan and dry run as
/// the timeline's traces, on their own clock from 0 (drawn shifted to end at 0).
struct ApproachTrace {
    generation: u64,
    device: (ChannelOutput, DeviceInfo),
    wake: WakeMode,
    rate_hz: f64,
    from: StartFrom,
    duration: f64,
    traces: Traces,
}

struct PlotLine {
    joint: Option<usize>,
    commanded: Vec<Column>,
    simulated: Vec<Column>,
}

#[derive(Clone, Copy, PartialEq)]
struct LinesKey {
    generation: u64,
    quantity: Quantity,
    joint: Option<usize>,
    x_range: [f64; 2],
    columns: usize,
}

impl TimelinePlot {
    /// The mapping between time and screen used in the last frame, once the plot was drawn.
    pub fn transform(&self) -> Option<&PlotTransform> {
        self.transform.as_ref()
    }

    /// Columns drawn in the last frame, over all lines.
    pub fn column_count(&self) -> usize {
        self.lines
            .iter()
            .map(|line| line.commanded.len() + line.simulated.len())
            .sum()
    }

    /// What the connected device last said it sends (`None`: no device, or it cannot say),
    /// and how a stream on its link wakes a limp arm.
    pub fn set_device(&mut self, device: Option<(ChannelOutput, DeviceInfo)>, wake: WakeMode) {
        self.device = device;
        self.wake = wake;
    }

    /// The approach drawn before time 0: where it starts from and how long it lasts (s);
    /// `None` when none is shown.
    pub fn approach(&self) -> Option<(StartFrom, f64)> {
        self.approach
            .as_ref()
            .map(|approach| (approach.from, approach.duration))
    }

    /// The traces of the approach drawn before time 0 (its commanded motion and its dry run,
    /// on the approach's own clock from 0); `None` when none is shown.
    pub fn approach_traces(&self) -> Option<&Traces> {
        self.approach.as_ref().map(|approach| &approach.traces)
    }

    /// Plans and dry-runs the approach again when the device's output or the timeline changed
    /// (a two-waypoint plan a few seconds long, on the UI thread).
    fn refresh_approach(&mut self, state: &EditorState, timeline: &Timeline) {
        let Some(device) = self.device else {
            self.approach = None;
            return;
        };
        let (wake, rate_hz) = (self.wake, state.scene.link.rate_hz);
        if self.approach.as_ref().is_some_and(|a| {
            a.generation == timeline.generation
                && a.device == device
                && a.wake == wake
                && a.rate_hz == rate_hz
        }) {
            return;
        }
        self.approach = state.arm().and_then(|arm| {
            // As the stream will start: a limp arm woken one joint at a time holds the rest pose
            // once per joint before the approach moves.
            let (start, from, _) =
                approach_start_waking(&state.scene, arm, Some(&device.0), &device.1, rate_hz, wake);
            let approach = approach_of(&state.scene, arm, &start).ok()?;
            let run = dry_run_of(&state.scene, arm, approach.plan()).ok()?;
            let options = dry_run_options_of(&state.scene);
            let traces = Traces::of(
                arm,
                approach.plan(),
                &run,
                options.derating,
                options.servo.frame_period,
            );
            Some(ApproachTrace {
                generation: timeline.generation,
                device,
                wake,
                rate_hz,
                from,
                duration: approach.duration(),
                traces,
            })
        });
    }

    fn refresh(&mut self, key: LinesKey, timeline: &Timeline) {
        if self.key == Some(key) {
            return;
        }
        self.key = Some(key);
        let traces = &timeline.traces;
        let points = |series| decimate(series, traces.bucket, key.x_range, key.columns);
        self.lines.clear();
        if !key.quantity.per_joint() {
            if let Some(series) = traces.simulated(key.quantity, 0) {
                self.lines.push(PlotLine {
                    joint: None,
                    commanded: Vec::new(),
                    simulated: points(series),
                });
            }
            return;
        }
        for joint in 0..traces.joints {
            if key.joint.is_some_and(|only| only != joint) {
                continue;
            }
            let commanded = traces.commanded(key.quantity, joint).map(points);
            let simulated = traces.simulated(key.quantity, joint).map(points);
            self.lines.push(PlotLine {
                joint: Some(joint),
                commanded: commanded.unwrap_or_default(),
                simulated: simulated.unwrap_or_default(),
            });
        }
    }
}

/// Draws the timeline panel.
pub fn timeline(ui: &mut Ui, state: &EditorState, plot: &mut TimelinePlot) -> Command {
    let playback = &state.playback;
    let mut wanted: Option<PlaybackCommand> = None;
    let timeline = playback.timeline.as_deref();
    ui.horizontal(|ui| {
        ui.heading("Timeline");
        ui.separator();
        let ready = timeline.is_some();
        if playback.playing {
            if ui.button("Pause").clicked() {
                wanted = Some(PlaybackCommand::Pause);
            }
        } else if ui.add_enabled(ready, Button::new("Play")).clicked() {
            wanted = Some(PlaybackCommand::Play);
        }
        ComboBox::from_id_salt("timeline speed")
            .width(64.0)
            .selected_text(speed_label(playback.speed))
            .show_ui(ui, |ui| {
                for speed in SPEEDS {
                    if ui
                        .selectable_label(playback.speed == speed, speed_label(speed))
                        .clicked()
                    {
                        wanted = Some(PlaybackCommand::SetSpeed(speed));
                    }
                }
            })
            .response
            .on_hover_text("playback speed, × real time");
        let looping = playback.at_end == AtEnd::Loop;
        if ui
            .selectable_label(looping, "loop")
            .on_hover_text("start again at the end (off: stop at the end)")
            .clicked()
        {
            wanted = Some(PlaybackCommand::SetAtEnd(if looping {
                AtEnd::Stop
            } else {
                AtEnd::Loop
            }));
        }
        ui.separator();
        let span = timeline.map_or(0.0, Timeline::span);
        let cycle = timeline.map_or(0.0, |timeline| CommandedMotion::duration(&timeline.plan));
        let mut cursor = playback.cursor;
        let field = ui.add_enabled(
            ready,
            DragValue::new(&mut cursor)
                .range(0.0..=span)
                .speed(0.01)
                .max_decimals(3)
                .suffix(" s"),
        );
        if field.changed() {
            wanted = Some(PlaybackCommand::SetCursor(cursor));
        }
        // The cycle is the plan's length, as the retime tab and `armwright plan` give it; the
        // dry run may run on while the servos settle.
        let approach = plot.approach.as_ref().map(|approach| approach.duration);
        let cycle_label = match approach {
            Some(approach) => ui
                .label(format!(
                    "cycle {cycle:.2} s + approach {approach:.2} s = {:.2} s",
                    cycle + approach
                ))
                .on_hover_text(
                    "the next stream starts with the approach from what the device sends now",
                ),
            None => ui.label(format!("cycle {cycle:.2} s")),
        };
        if span > cycle + 5e-4 {
            cycle_label.on_hover_text(format!(
                "the dry run goes on to {span:.2} s while the servos settle"
            ));
        }
        if matches!(playback.status, DryRunStatus::Running) {
            ui.spinner();
            ui.label("dry run…");
        }
    });
    ui.horizontal(|ui| {
        for quantity in Quantity::ALL {
            if ui
                .selectable_label(playback.quantity == quantity, quantity.label())
                .clicked()
            {
                wanted = Some(PlaybackCommand::Show(quantity));
            }
        }
        if playback.quantity.per_joint() {
            ui.separator();
            let label = |joint: Option<usize>| match joint {
                None => "every joint".to_string(),
                Some(joint) => state.joint_label(joint),
            };
            ComboBox::from_id_salt("timeline joint")
                .selected_text(label(playback.joint))
                .show_ui(ui, |ui| {
                    for joint in std::iter::once(None).chain((0..state.joint_count()).map(Some)) {
                        if ui
                            .selectable_label(playback.joint == joint, label(joint))
                            .clicked()
                        {
                            wanted = Some(PlaybackCommand::ShowJoint(joint));
                        }
                    }
                })
                .response
                .on_hover_text("which joint the plot shows");
        }
    });
    if let DryRunStatus::Failed(reason) = &playback.status {
        ui.colored_label(ERROR, RichText::new(reason).strong());
        ui.label("Fix the sequence or the arm; the dry run starts again after each change.");
        plot.transform = None;
        return wanted.map_or(Command::None, Command::Playback);
    }
    let Some(timeline) = timeline else {
        ui.label("Planning the sequence and running the dry run…");
        plot.transform = None;
        return wanted.map_or(Command::None, Command::Playback);
    };
    plot.refresh_approach(state, timeline);
    let caption = if playback.quantity.per_joint() {
        format!(
            "thin: commanded · pale band: dry run (acceleration, torque: {:.0} ms frame means) · click or drag to move the cursor",
            timeline.traces.frame_period * 1e3
        )
    } else {
        "distance between the commanded and the simulated tool point · click or drag to move the cursor".to_string()
    };
    ui.label(RichText::new(caption).small());
    ui.label(RichText::new(approach_caption(plot.approach.as_ref())).small());
    if let Some(found) = state.dry_run_found() {
        dry_run_marks::list_on_timeline(ui, &state.scene, found);
    }
    if let Some(set) = plot_lines(ui, state, timeline, plot) {
        wanted = Some(PlaybackCommand::SetCursor(set));
    }
    wanted.map_or(Command::None, Command::Playback)
}

/// Grid steps for the value axis: the smallest 1-2-5 step at least `least` apart, and 5 and
/// 10 times it, so labels come every few grid lines instead of only at powers of ten (a plot
/// spanning −99…99 would otherwise label nothing but 0).
fn steps_1_2_5(least: f64) -> [f64; 3] {
    let least = least.abs();
    if !least.is_finite() || least <= 0.0 {
        return [1.0, 5.0, 10.0];
    }
    let decade = 10f64.powf(least.log10().floor());
    let step = [1.0, 2.0, 5.0, 10.0]
        .into_iter()
        .map(|factor| factor * decade)
        .find(|step| *step >= least * (1.0 - 1e-9))
        .unwrap_or(10.0 * decade);
    [step, 5.0 * step, 10.0 * step]
}

/// What the timeline says about the approach the next stream starts with.
fn approach_caption(approach: Option<&ApproachTrace>) -> String {
    match approach.map(|approach| approach.from) {
        Some(StartFrom::Held) => "shaded before 0 s: the approach from where the device holds \
                                  the arm now, commanded and dry run"
            .to_owned(),
        Some(StartFrom::Limp | StartFrom::Unknown) => {
            let woken = match approach.map(|approach| approach.wake) {
                Some(WakeMode::OneAtATime) => "one joint at a time, a wake pause each",
                _ => "all joints together, held for the wake pause",
            };
            format!(
                "shaded before 0 s: a servo is limp, so the arm is woken at its rest pose \
                 ({woken}), then approaches (its dry run starts at rest there: the jump a limp \
                 servo makes to its first pulse is not modelled)"
            )
        }
        None => "a stream starts with an approach planned from what the device reports at \
                 stream time"
            .to_owned(),
    }
}

fn speed_label(speed: f64) -> String {
    format!("{speed}×")
}

/// The plot itself; returns the time the user put the cursor at, if any.
fn plot_lines(
    ui: &mut Ui,
    state: &EditorState,
    timeline: &Timeline,
    plot: &mut TimelinePlot,
) -> Option<f64> {
    let playback = &state.playback;
    let quantity = playback.quantity;
    let span = timeline.span();
    let lines_key = |bounds_x: [f64; 2], width: f32| {
        let x_range = if bounds_x[1] > bounds_x[0] && bounds_x[0] < span && bounds_x[1] > 0.0 {
            [bounds_x[0].max(0.0), bounds_x[1].min(span)]
        } else {
            [0.0, span]
        };
        LinesKey {
            generation: timeline.generation,
            quantity,
            joint: playback.joint,
            x_range,
            columns: (width / COLUMN_WIDTH).max(1.0) as usize,
        }
    };
    let names: Vec<String> = (0..timeline.traces.joints)
        .map(|joint| {
            format!(
                "{} {}",
                joint + 1,
                state
                    .scene
                    .arm
                    .joints
                    .get(joint)
                    .map_or("", |doc| doc.name.as_str())
            )
        })
        .collect();
    let shown = |joint: usize| playback.joint.is_none_or(|only| only == joint);
    let shown_joints = (0..timeline.traces.joints).filter(|joint| shown(*joint));
    let (turning, sliding) = shown_joints.fold((false, false), |(turning, sliding), joint| {
        let slides = state.is_prismatic(joint);
        (turning || !slides, sliding || slides)
    });
    let axis_label = quantity.axis_label(turning, sliding);
    if quantity.per_joint() {
        // The legend is a row above the plot rather than a box in it, where it covered the
        // waypoint names and the lines.
        ui.horizontal_wrapped(|ui| {
            for joint in (0..timeline.traces.joints).filter(|joint| shown(*joint)) {
                let (swatch, _) = ui.allocate_exact_size(vec2(16.0, 10.0), egui::Sense::hover());
                ui.painter().rect_filled(
                    Rect::from_center_size(swatch.center(), vec2(16.0, 3.0)),
                    0.0,
                    JOINT_COLOURS[joint % JOINT_COLOURS.len()],
                );
                ui.label(RichText::new(&names[joint]).small());
            }
        });
    }
    let approach_s = plot.approach.as_ref().map_or(0.0, |a| a.duration);
    let approach_lines: Vec<PlotLine> = plot
        .approach
        .as_ref()
        .map(|approach| approach_lines(approach, quantity, &shown))
        .unwrap_or_default();
    let lines = &mut *plot;
    let response = Plot::new("armwright timeline plot")
        .allow_drag(false)
        .allow_boxed_zoom(false)
        .allow_zoom([true, false])
        .allow_scroll([true, false])
        .include_x(-approach_s)
        .include_x(span)
        .show_crosshair(false)
        .custom_x_axes(vec![
            AxisHints::new_x()
                .label_spacing(34.0..=48.0)
                .formatter(|mark, _| format!("{} s", mark.value)),
        ])
        .y_grid_spacer(uniform_grid_spacer(|input| {
            steps_1_2_5(input.base_step_size)
        }))
        .custom_y_axes(vec![
            AxisHints::new_y()
                .label(axis_label)
                .label_spacing(16.0..=24.0)
                .min_thickness(40.0),
        ])
        .show(ui, |plot_ui| {
            let bounds = plot_ui.plot_bounds();
            let width = plot_ui.response().rect.width();
            let key = lines_key([bounds.min()[0], bounds.max()[0]], width);
            lines.refresh(key, timeline);
            let lines: &TimelinePlot = lines;
            for line in approach_lines.iter().chain(&lines.lines) {
                let (name, colour) = match line.joint {
                    Some(joint) => (
                        names[joint].as_str(),
                        JOINT_COLOURS[joint % JOINT_COLOURS.len()],
                    ),
                    None => ("tool point", JOINT_COLOURS[1]),
                };
                // The deviation has no commanded side: its one line is drawn as a line.
                let (simulated_colour, simulated_width) = if line.commanded.is_empty() {
                    (colour, COMMANDED_WIDTH)
                } else {
                    (colour.gamma_multiply(0.35), SIMULATED_WIDTH)
                };
                plot_ui.add(Band::new(
                    name,
                    &line.simulated,
                    simulated_colour,
                    simulated_width,
                ));
                plot_ui.add(Band::new(name, &line.commanded, colour, COMMANDED_WIDTH));
            }
        });
    let transform = response.transform;
    let frame = *transform.frame();
    let painter = ui.painter_at(frame);
    let bounds = transform.bounds();
    if let Some(approach) = &plot.approach {
        let left = transform.position_from_point_x(-approach.duration);
        let right = transform.position_from_point_x(0.0);
        if right > frame.left() {
            let shaded = Rect::from_x_y_ranges(left.max(frame.left())..=right, frame.y_range());
            painter.rect_filled(shaded, 0.0, APPROACH.gamma_multiply(0.12));
            painter.text(
                // Below the waypoint names, clear of the cursor's time at the bottom.
                pos2(shaded.left() + 3.0, frame.top() + 16.0),
                Align2::LEFT_TOP,
                format!("approach {:.2} s", approach.duration),
                FontId::proportional(11.0),
                APPROACH,
            );
        }
    }
    // Marks closer than a few pixels merge; all of them are one mesh.
    let mut marks = Mesh::default();
    let mut last_mark_x = f32::NEG_INFINITY;
    let mut last_name_right = f32::NEG_INFINITY;
    for (name, arrival) in &timeline.marks {
        if *arrival < bounds.min()[0] || *arrival > bounds.max()[0] {
            continue;
        }
        let x = transform.position_from_point_x(*arrival);
        if x - last_mark_x >= MARK_SPACING {
            marks.add_colored_rect(
                Rect::from_x_y_ranges(x - 0.5..=x + 0.5, frame.y_range()),
                MARK.gamma_multiply(0.5),
            );
            last_mark_x = x;
        }
        if x + 3.0 >= last_name_right + NAME_GAP {
            let galley = painter.layout_no_wrap(name.clone(), FontId::proportional(11.0), MARK);
            let width = galley.size().x;
            painter.galley(pos2(x + 3.0, frame.top() + 2.0), galley, MARK);
            last_name_right = x + 3.0 + width;
        }
    }
    painter.add(Shape::mesh(marks));
    if let Some(found) = state.dry_run_found() {
        dry_run_marks::paint_on_timeline(&painter, &transform, found);
    }
    let x = transform.position_from_point_x(playback.cursor);
    painter.add(Shape::rect_filled(
        Rect::from_x_y_ranges(x - 1.0..=x + 1.0, frame.y_range()),
        0.0,
        CURSOR,
    ));
    painter.text(
        pos2(x, frame.bottom() - 2.0) + vec2(4.0, 0.0),
        Align2::LEFT_BOTTOM,
        format!("{:.2} s", playback.cursor),
        FontId::proportional(11.0),
        CURSOR,
    );
    plot.transform = Some(transform);
    let scrub = &response.response;
    if (scrub.dragged() || scrub.clicked() || scrub.drag_started())
        && let Some(pointer) = scrub.interact_pointer_pos()
    {
        let t = transform.value_from_position(pointer).x;
        return Some(t.clamp(0.0, span));
    }
    None
}

/// The approach's lines of `quantity` for the joints `shown` (or its tool-point deviation),
/// commanded and dry run, as plot columns shifted to end at time 0.
fn approach_lines(
    approach: &ApproachTrace,
    quantity: Quantity,
    shown: &dyn Fn(usize) -> bool,
) -> Vec<PlotLine> {
    let traces = &approach.traces;
    let columns = |series| {
        let mut columns = decimate(
            series,
            traces.bucket,
            [0.0, approach.duration],
            APPROACH_COLUMNS,
        );
        // Only the approach itself: its dry run's settling tail is the plan's start.
        columns.retain(|column| column.x <= approach.duration);
        for column in &mut columns {
            column.x -= approach.duration;
        }
        columns
    };
    if !quantity.per_joint() {
        return traces
            .simulated(quantity, 0)
            .map(|series| PlotLine {
                joint: None,
                commanded: Vec::new(),
                simulated: columns(series),
            })
            .into_iter()
            .collect();
    }
    (0..traces.joints)
        .filter(|joint| shown(*joint))
        .map(|joint| PlotLine {
            joint: Some(joint),
            commanded: traces
                .commanded(quantity, joint)
                .map(&columns)
                .unwrap_or_default(),
            simulated: traces
                .simulated(quantity, joint)
                .map(&columns)
                .unwrap_or_default(),
        })
        .collect()
}

/// A decimated series drawn as one strip of triangles through its columns, `thickness` points
/// thick where it is flat and covering every column's smallest to largest value: a line that
/// shows every peak, for a fraction of a stroked line's cost.
struct Band<'a> {
    base: PlotItemBase,
    columns: &'a [Column],
    colour: Color32,
    thickness: f32,
    bounds: PlotBounds,
}

impl<'a> Band<'a> {
    fn new(name: &str, columns: &'a [Column], colour: Color32, thickness: f32) -> Band<'a> {
        let mut bounds = PlotBounds::NOTHING;
        for column in columns {
            bounds.extend_with_x(column.x);
            bounds.extend_with_y(column.min);
            bounds.extend_with_y(column.max);
        }
        Band {
            base: PlotItemBase::new(name.to_string()),
            columns,
            colour,
            thickness,
            bounds,
        }
    }
}

impl PlotItem for Band<'_> {
    fn shapes(&self, _ui: &Ui, transform: &PlotTransform, shapes: &mut Vec<Shape>) {
        if self.columns.is_empty() {
            return;
        }
        let half = self.thickness / 2.0;
        let mut mesh = Mesh::default();
        mesh.reserve_vertices(2 * self.columns.len());
        mesh.reserve_triangles(2 * self.columns.len());
        for (index, column) in self.columns.iter().enumerate() {
            let x = transform.position_from_point_x(column.x);
            // Screen y grows downwards: the largest value is the top edge.
            let top = transform.position_from_point_y(column.max) - half;
            let bottom = transform.position_from_point_y(column.min) + half;
            mesh.colored_vertex(pos2(x, top), self.colour);
            mesh.colored_vertex(pos2(x, bottom), self.colour);
            if index > 0 {
                let at = 2 * index as u32;
                mesh.add_triangle(at - 2, at - 1, at);
                mesh.add_triangle(at - 1, at + 1, at);
            }
        }
        if self.columns.len() == 1 {
            // A single column: a short bar so it still shows.
            let bar = Rect::from_min_max(mesh.vertices[0].pos, mesh.vertices[1].pos)
                .expand2(vec2(half, 0.0));
            shapes.push(Shape::rect_filled(bar, 0.0, self.colour));
            return;
        }
        shapes.push(Shape::mesh(mesh));
    }

    fn initialize(&mut self, _x_range: RangeInclusive<f64>) {}

    fn color(&self) -> Color32 {
        self.colour
    }

    fn geometry(&self) -> PlotGeometry<'_> {
        PlotGeometry::None
    }

    fn bounds(&self) -> PlotBounds {
        self.bounds
    }

    fn base(&self) -> &PlotItemBase {
        &self.base
    }

    fn base_mut(&mut self) -> &mut PlotItemBase {
        &mut self.base
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_value_axis_names_the_units_of_the_joints_shown() {
        assert_eq!(Quantity::Angle.axis_label(true, false), "°");
        assert_eq!(Quantity::Velocity.axis_label(false, true), "mm/s");
        assert_eq!(
            Quantity::Angle.axis_label(true, true),
            "° (turning), mm (sliding)"
        );
        assert_eq!(Quantity::TorqueUse.axis_label(true, true), "% of rated");
    }

    #[test]
    fn value_steps_follow_1_2_5() {
        assert_eq!(steps_1_2_5(8.0), [10.0, 50.0, 100.0]);
        assert_eq!(steps_1_2_5(1.5), [2.0, 10.0, 20.0]);
        assert_eq!(steps_1_2_5(-0.3), [0.5, 2.5, 5.0]);
        assert_eq!(steps_1_2_5(20.0), [20.0, 100.0, 200.0]);
        assert_eq!(steps_1_2_5(0.0), [1.0, 5.0, 10.0]);
    }
}
