//! Drawing to scale on any plane: grid, scale bar, workspace objects, the stored waypoints, the
//! arm's links and joints and the tool point.
//!
//! Colours come from the Okabe–Ito palette, which stays distinguishable for the common kinds of
//! colour blindness (common practice in scientific figures).

use armwright_kinematics::{ChainPose, ToolAngles, forward};
use egui::{Align2, Color32, FontId, Painter, Pos2, Rect, Shape, Stroke, StrokeKind, pos2, vec2};
use nalgebra::Vector3;

use super::Plane;
use super::ViewKind;
use super::labels::Label;
use super::projection::{Projection, nice_length_mm};
use super::reach_layer::{MapLayer, OVER_RATING, viridis};
use crate::editor::state::EditorState;
use crate::scene::pose_from_file_units;

/// View background.
pub const BACKGROUND: Color32 = Color32::from_rgb(24, 27, 31);
/// Minor grid lines.
const GRID_MINOR: Color32 = Color32::from_rgb(36, 40, 46);
/// Major grid lines.
const GRID_MAJOR: Color32 = Color32::from_rgb(52, 58, 66);
/// Base axes.
const AXES: Color32 = Color32::from_rgb(90, 98, 110);
/// Links (Okabe–Ito sky blue).
pub(super) const LINK: Color32 = Color32::from_rgb(86, 180, 233);
/// Joints (Okabe–Ito orange).
const JOINT: Color32 = Color32::from_rgb(230, 159, 0);
/// Tool point (Okabe–Ito yellow).
const TOOL: Color32 = Color32::from_rgb(240, 228, 66);
/// Warnings (Okabe–Ito vermillion).
pub const WARNING: Color32 = Color32::from_rgb(213, 94, 0);
/// Boxes (Okabe–Ito bluish green).
const BOX: Color32 = Color32::from_rgb(0, 158, 115);
/// Trays (Okabe–Ito reddish purple).
const TRAY: Color32 = Color32::from_rgb(204, 121, 167);
/// The table plane.
const TABLE: Color32 = Color32::from_rgb(58, 50, 40);
/// Stored waypoints.
const WAYPOINT: Color32 = Color32::from_rgb(170, 170, 180);
/// Text on the view.
pub(super) const LABEL: Color32 = Color32::from_rgb(200, 204, 210);

/// Screen points between minor grid lines, at least.
const GRID_MIN_SPACING: f64 = 14.0;

/// Background, minor and major grid, base axes.
pub fn grid(painter: &Painter, projection: &Projection) {
    painter.rect_filled(projection.rect, 0.0, BACKGROUND);
    let step = nice_length_mm(GRID_MIN_SPACING / projection.points_per_mm);
    let major = step * 5.0;
    let (x_range, y_range) = projection.visible_mm();
    let rect = projection.rect;
    let mut shapes = Vec::new();
    let mut value = (x_range[0] / step).floor() * step;
    while value <= x_range[1] {
        let x = projection.to_screen([value, 0.0]).x;
        shapes.push(Shape::line_segment(
            [pos2(x, rect.top()), pos2(x, rect.bottom())],
            Stroke::new(1.0, grid_colour(value, major)),
        ));
        value += step;
    }
    let mut value = (y_range[0] / step).floor() * step;
    while value <= y_range[1] {
        let y = projection.to_screen([0.0, value]).y;
        shapes.push(Shape::line_segment(
            [pos2(rect.left(), y), pos2(rect.right(), y)],
            Stroke::new(1.0, grid_colour(value, major)),
        ));
        value += step;
    }
    let origin = projection.to_screen([0.0, 0.0]);
    shapes.push(Shape::line_segment(
        [pos2(rect.left(), origin.y), pos2(rect.right(), origin.y)],
        Stroke::new(1.0, AXES),
    ));
    shapes.push(Shape::line_segment(
        [pos2(origin.x, rect.top()), pos2(origin.x, rect.bottom())],
        Stroke::new(1.0, AXES),
    ));
    painter.extend(shapes);
}

fn grid_colour(value: f64, major: f64) -> Color32 {
    let remainder = (value / major).round() * major - value;
    if remainder.abs() < major * 1e-6 {
        GRID_MAJOR
    } else {
        GRID_MINOR
    }
}

/// A scale bar of a round length in the bottom-left corner, with the grid step beside it.
///
/// `avoid` is a box already drawn in the bottom corner (the colour legend): when the scale bar
/// and its label would reach into it, the bar goes above it instead. Returns the box it covers.
pub fn scale_bar(painter: &Painter, projection: &Projection, avoid: Option<Rect>) -> Rect {
    let length_mm = nice_length_mm(90.0 / projection.points_per_mm);
    let length = (length_mm * projection.points_per_mm) as f32;
    let grid_mm = nice_length_mm(GRID_MIN_SPACING / projection.points_per_mm);
    let text = format!(
        "{} mm  (grid {} mm)",
        format_mm(length_mm),
        format_mm(grid_mm)
    );
    let font = FontId::proportional(12.0);
    let text_width = painter
        .layout_no_wrap(text.clone(), font.clone(), LABEL)
        .size()
        .x;
    let mut start = projection.rect.left_bottom() + vec2(16.0, -18.0);
    let backdrop = |start: Pos2| {
        let end = start + vec2(length, 0.0);
        let half_text = (text_width - length).max(0.0) / 2.0;
        Rect::from_min_max(
            start + vec2(-8.0 - half_text, -24.0),
            end + vec2(8.0 + half_text, 10.0),
        )
    };
    if let Some(avoid) = avoid
        && backdrop(start).intersects(avoid)
    {
        start.y = avoid.top() - 14.0;
    }
    let end = start + vec2(length, 0.0);
    let stroke = Stroke::new(2.0, LABEL);
    let covered = backdrop(start);
    painter.rect_filled(covered, 3.0, BACKGROUND.gamma_multiply(0.85));
    painter.line_segment([start, end], stroke);
    painter.line_segment([start + vec2(0.0, -5.0), start + vec2(0.0, 5.0)], stroke);
    painter.line_segment([end + vec2(0.0, -5.0), end + vec2(0.0, 5.0)], stroke);
    painter.text(
        start + vec2(length / 2.0, -6.0),
        Align2::CENTER_BOTTOM,
        text,
        font,
        LABEL,
    );
    covered
}

fn format_mm(value: f64) -> String {
    if value >= 1.0 {
        format!("{value:.0}")
    } else {
        format!("{value}")
    }
}

/// The table plane, boxes and trays; their names go to `labels`, to be placed free of each
/// other.
pub fn workspace(
    painter: &Painter,
    projection: &Projection,
    plane: &dyn Plane,
    kind: ViewKind,
    state: &EditorState,
    labels: &mut Vec<Label>,
) {
    let workspace = &state.scene.workspace;
    let rect = projection.rect;
    if let Some(height_mm) = workspace.table_height_mm {
        match kind {
            // The top view names the table's height in its caption.
            ViewKind::Top => {}
            ViewKind::Side => {
                let y = projection.to_screen([0.0, height_mm]).y;
                if y < rect.bottom() {
                    let table = Rect::from_min_max(
                        pos2(rect.left(), y.max(rect.top())),
                        rect.right_bottom(),
                    );
                    painter.rect_filled(table, 0.0, TABLE.gamma_multiply(0.6));
                    painter.line_segment(
                        [pos2(rect.left(), y), pos2(rect.right(), y)],
                        Stroke::new(2.0, TABLE.gamma_multiply(2.0)),
                    );
                }
            }
        }
    }
    for object in &workspace.boxes {
        let outline = block(
            painter,
            projection,
            plane,
            kind,
            object.position_mm,
            object.size_mm,
            BOX,
        );
        labels.push(object_label(&object.name, outline, BOX));
    }
    for tray in &workspace.trays {
        let outline = block(
            painter,
            projection,
            plane,
            kind,
            tray.position_mm,
            tray.size_mm,
            TRAY,
        );
        labels.push(object_label(&tray.name, outline, TRAY));
        if kind == ViewKind::Top {
            let stroke = Stroke::new(1.0, TRAY.gamma_multiply(0.6));
            for i in 1..tray.pockets[0] {
                let x = outline.left() + outline.width() * i as f32 / tray.pockets[0] as f32;
                painter.line_segment([pos2(x, outline.top()), pos2(x, outline.bottom())], stroke);
            }
            for j in 1..tray.pockets[1] {
                let y = outline.top() + outline.height() * j as f32 / tray.pockets[1] as f32;
                painter.line_segment([pos2(outline.left(), y), pos2(outline.right(), y)], stroke);
            }
        }
    }
}

fn object_label(name: &str, outline: Rect, colour: Color32) -> Label {
    Label {
        text: name.to_string(),
        beside: outline,
        colour,
        size: 11.0,
        importance: 0,
    }
}

/// An axis-aligned block standing on `bottom_centre_mm`, drawn as its outline on the plane;
/// returns the outline on screen.
fn block(
    painter: &Painter,
    projection: &Projection,
    plane: &dyn Plane,
    kind: ViewKind,
    bottom_centre_mm: [f64; 3],
    size_mm: [f64; 3],
    colour: Color32,
) -> Rect {
    let [cx, cy, cz] = bottom_centre_mm;
    let [sx, sy, sz] = size_mm;
    let outline = match kind {
        ViewKind::Top => projection.rect_of(
            [cx - sx / 2.0, cx + sx / 2.0],
            [cy - sy / 2.0, cy + sy / 2.0],
        ),
        ViewKind::Side => {
            let mut low = f64::INFINITY;
            let mut high = f64::NEG_INFINITY;
            for dx in [-0.5, 0.5] {
                for dy in [-0.5, 0.5] {
                    let corner = Vector3::new(cx + dx * sx, cy + dy * sy, cz) * 1e-3;
                    let along = plane.project(&corner)[0];
                    low = low.min(along);
                    high = high.max(along);
                }
            }
            projection.rect_of([low, high], [cz, cz + sz])
        }
    };
    painter.rect_filled(outline, 2.0, colour.gamma_multiply(0.18));
    painter.rect_stroke(outline, 2.0, Stroke::new(1.5, colour), StrokeKind::Middle);
    outline
}

/// The tool points of the stored waypoints, joined in order, the selected one ringed; its name
/// goes to `labels`.
pub fn waypoints(
    painter: &Painter,
    projection: &Projection,
    plane: &dyn Plane,
    state: &EditorState,
    labels: &mut Vec<Label>,
) {
    let Some(arm) = state.arm() else {
        return;
    };
    let count = state.joint_count();
    let mut points = Vec::with_capacity(state.scene.waypoints.len());
    for (index, waypoint) in state.scene.waypoints.iter().enumerate() {
        if waypoint.joints_deg_or_mm.len() != count {
            continue;
        }
        let pose = pose_from_file_units(&state.scene.arm, &waypoint.joints_deg_or_mm);
        let Ok(chain) = forward(arm, &pose) else {
            continue;
        };
        let screen = projection.to_screen(plane.project(&chain.tool().translation.vector));
        points.push(screen);
        if state.selected_waypoint == Some(index) {
            painter.circle_stroke(screen, 7.0, Stroke::new(2.0, WAYPOINT));
            labels.push(Label {
                text: waypoint.name.clone(),
                beside: Rect::from_center_size(screen, vec2(18.0, 18.0)),
                colour: WAYPOINT,
                size: 12.0,
                importance: 1,
            });
        }
    }
    // One thin path and square markers: a dashed path or round markers cost ten times as much
    // to tessellate with hundreds of waypoints.
    if points.len() > 1 {
        painter.add(Shape::line(
            points.clone(),
            Stroke::new(1.0, WAYPOINT.gamma_multiply(0.45)),
        ));
    }
    let marker = vec2(5.0, 5.0);
    painter.extend(
        points
            .into_iter()
            .map(|point| Shape::rect_filled(Rect::from_center_size(point, marker), 0.0, WAYPOINT)),
    );
}

/// Where a posed chain lies on screen: the base, every joint frame, then the tool point.
pub(super) fn chain_on_screen(
    projection: &Projection,
    plane: &dyn Plane,
    chain: &ChainPose,
) -> Vec<Pos2> {
    let mut points = vec![projection.to_screen(plane.project(&Vector3::zeros()))];
    points.extend(
        chain
            .frames()
            .iter()
            .map(|frame| projection.to_screen(plane.project(&frame.translation.vector))),
    );
    points.push(projection.to_screen(plane.project(&chain.tool().translation.vector)));
    points
}

/// The arm's links and joints at the current pose and the tool point; returns the tool point's
/// screen position.
pub fn arm(
    painter: &Painter,
    projection: &Projection,
    plane: &dyn Plane,
    state: &EditorState,
    grabbed: bool,
) -> Option<Pos2> {
    let chain = forward(state.arm()?, &state.pose).ok()?;
    let points = chain_on_screen(projection, plane, &chain);
    let tool_point = chain.tool().translation.vector;
    let tool = points[points.len() - 1];
    // The base as a small plinth.
    painter.rect_filled(
        Rect::from_center_size(points[0], vec2(22.0, 22.0)),
        4.0,
        AXES.gamma_multiply(0.8),
    );
    painter.add(Shape::line(
        points.clone(),
        Stroke::new(7.0, LINK.gamma_multiply(0.5)),
    ));
    painter.add(Shape::line(points.clone(), Stroke::new(3.0, LINK)));
    for joint in &points[1..points.len() - 1] {
        painter.circle(*joint, 5.5, BACKGROUND, Stroke::new(2.5, JOINT));
    }
    // The tool's approach direction.
    let ahead = tool_point + ToolAngles::approach(chain.tool()).into_inner() * 0.03;
    let ahead = projection.to_screen(plane.project(&ahead));
    if ahead.distance(tool) > 3.0 {
        painter.arrow(
            tool,
            (ahead - tool).normalized() * 26.0,
            Stroke::new(1.5, TOOL),
        );
    }
    let ring = if state_has_problem(state) {
        WARNING
    } else {
        TOOL
    };
    painter.circle(
        tool,
        if grabbed { 9.0 } else { 7.5 },
        TOOL.gamma_multiply(0.9),
        Stroke::new(2.5, ring),
    );
    painter.circle_stroke(tool, 13.0, Stroke::new(1.0, ring.gamma_multiply(0.6)));
    Some(tool)
}

fn state_has_problem(state: &EditorState) -> bool {
    !matches!(
        state.readout.reach,
        crate::editor::state::ReachStatus::Idle | crate::editor::state::ReachStatus::Reached
    ) || state.readout.worst_torque_overload().is_some()
}

/// The view's title in the top-left corner with a smaller line under it (what slice it shows),
/// and its problems in the top-right.
///
/// The problem lines sit at the top right; when the first would run into the title (a narrow
/// view, a long message), they all go below the title instead. Returns the box the captions
/// cover, in screen points.
pub fn captions(
    painter: &Painter,
    rect: Rect,
    title: &str,
    subtitle: &str,
    problems: &[String],
) -> Rect {
    let font = FontId::proportional(14.0);
    let title_rect = painter.text(
        rect.left_top() + vec2(10.0, 8.0),
        Align2::LEFT_TOP,
        title,
        font.clone(),
        LABEL,
    );
    let mut covered = title_rect;
    if !subtitle.is_empty() {
        let drawn = painter.text(
            title_rect.left_bottom() + vec2(0.0, 3.0),
            Align2::LEFT_TOP,
            subtitle,
            FontId::proportional(12.0),
            LABEL.gamma_multiply(0.75),
        );
        covered = covered.union(drawn);
    }
    let widest = problems
        .iter()
        .map(|text| {
            painter
                .layout_no_wrap(text.clone(), font.clone(), WARNING)
                .size()
                .x
        })
        .fold(0.0_f32, f32::max);
    let clear_of_title = rect.right() - 10.0 - widest > covered.right() + 12.0;
    let top = if clear_of_title {
        rect.top() + 8.0
    } else {
        covered.bottom() + 4.0
    };
    for (line, text) in problems.iter().enumerate() {
        let drawn = painter.text(
            pos2(rect.right() - 10.0, top + 18.0 * line as f32),
            Align2::RIGHT_TOP,
            text,
            font.clone(),
            WARNING,
        );
        covered = covered.union(drawn);
    }
    covered
}

/// Envelope boundary.
const ENVELOPE: Color32 = Color32::from_rgb(235, 235, 240);

/// Dash and gap of the any-angle boundary, in points.
const ANY_ANGLE_DASH: (f32, f32) = (5.0, 4.0);

/// The maps a view draws: the one at the tool angle a drag holds (shaded, solid boundary) and
/// the one over any tool angle (faint dashed boundary).
#[derive(Clone, Copy, Default)]
pub struct ViewMaps<'a> {
    /// At the held tool angle.
    pub at_angle: Option<&'a MapLayer>,
    /// Over any tool angle.
    pub any_angle: Option<&'a MapLayer>,
}

/// The envelope's boundary polylines of `layer` on screen.
fn boundary_on_screen(projection: &Projection, layer: &MapLayer) -> Vec<Vec<Pos2>> {
    layer
        .map
        .boundary()
        .iter()
        .map(|line| {
            line.iter()
                .map(|[u, v]| projection.to_screen([u * 1e3, v * 1e3]))
                .collect::<Vec<Pos2>>()
        })
        .filter(|points| points.len() > 1)
        .collect()
}

/// The torque-use shading and the reach envelope's boundary at the held tool angle, and the
/// boundary over any tool angle, dashed and fainter.
pub fn reach(painter: &Painter, projection: &Projection, maps: ViewMaps<'_>) {
    if let Some(layer) = maps.at_angle {
        let extent = layer.map.extent();
        let rect = projection.rect_of(
            [extent.u_min * 1e3, extent.u_max * 1e3],
            [extent.v_min * 1e3, extent.v_max * 1e3],
        );
        painter.image(
            layer.texture.id(),
            rect,
            Rect::from_min_max(pos2(0.0, 0.0), pos2(1.0, 1.0)),
            Color32::WHITE,
        );
    }
    if let Some(layer) = maps.any_angle {
        let stroke = Stroke::new(1.2, ENVELOPE.gamma_multiply(0.45));
        for points in boundary_on_screen(projection, layer) {
            painter.extend(Shape::dashed_line(
                &points,
                stroke,
                ANY_ANGLE_DASH.0,
                ANY_ANGLE_DASH.1,
            ));
        }
    }
    if let Some(layer) = maps.at_angle {
        let stroke = Stroke::new(1.5, ENVELOPE.gamma_multiply(0.85));
        for points in boundary_on_screen(projection, layer) {
            painter.add(Shape::line(points, stroke));
        }
    }
}

/// The tool angle's name for the arm: "tool yaw" for the horizontal-jointed arm, else "tool
/// pitch".
pub fn tool_angle_name(state: &EditorState) -> &'static str {
    match state.arm().map(|arm| arm.arm_type()) {
        Some(armwright_kinematics::ArmType::Scara(_)) => "tool yaw",
        _ => "tool pitch",
    }
}

/// The legend of the reach maps in the bottom-right corner: the two boundaries (at the held tool
/// angle, over any angle) and the torque-use ramp with the range it spans and the colour of cells
/// over the rating.
///
/// Returns the box it covers, in screen points.
pub fn reach_legend(painter: &Painter, rect: Rect, maps: ViewMaps<'_>, angle_name: &str) -> Rect {
    let font = FontId::proportional(11.0);
    let line_height = 15.0;
    let swatch_width = 22.0;
    let angle = maps
        .at_angle
        .and_then(|layer| layer.key.tool_angle)
        .map(|angle| format!("{angle_name} {:.1}°", angle.to_degrees()));
    let ramp = maps.at_angle.map(|layer| layer.ramp);
    // Rows from the top: boundary at the angle, boundary over any angle, ramp title, ramp bar,
    // ramp ticks.
    let mut rows: Vec<String> = Vec::new();
    if let Some(angle) = &angle {
        rows.push(format!("reach at {angle}"));
    }
    if maps.any_angle.is_some() {
        rows.push(format!("reach at any {angle_name}"));
    }
    let ramp_title = ramp.map(|ramp| match ramp.range {
        Some((low, high)) => {
            // A narrow range keeps a decimal so its ends differ.
            let decimals = if (high - low) * 100.0 < 5.0 { 1 } else { 0 };
            format!(
                "torque use {:.decimals$}–{:.decimals$} % of rated",
                low * 100.0,
                high * 100.0
            )
        }
        None => "torque use: nothing reachable".to_string(),
    });
    let text_width = |text: &str| {
        painter
            .layout_no_wrap(text.to_string(), font.clone(), LABEL)
            .size()
            .x
    };
    let bar_width = 150.0_f32;
    let width = rows
        .iter()
        .map(|row| swatch_width + 6.0 + text_width(row))
        .chain(ramp_title.iter().map(|title| text_width(title)))
        .fold(bar_width, f32::max);
    let ramp_height = if ramp.is_some() { 48.0 } else { 0.0 };
    let height = rows.len() as f32 * line_height + ramp_height;
    let top_left = rect.right_bottom() + vec2(-width - 16.0, -height - 14.0);
    let backdrop = Rect::from_min_size(top_left, vec2(width, height)).expand2(vec2(8.0, 6.0));
    painter.rect_filled(backdrop, 3.0, BACKGROUND.gamma_multiply(0.85));
    let mut y = top_left.y;
    for (index, row) in rows.iter().enumerate() {
        let middle = y + line_height / 2.0;
        let swatch = [
            pos2(top_left.x, middle),
            pos2(top_left.x + swatch_width, middle),
        ];
        let is_any = angle.is_none() || index == 1;
        if is_any {
            painter.extend(Shape::dashed_line(
                &swatch,
                Stroke::new(1.2, ENVELOPE.gamma_multiply(0.45)),
                ANY_ANGLE_DASH.0,
                ANY_ANGLE_DASH.1,
            ));
        } else {
            painter.line_segment(swatch, Stroke::new(1.5, ENVELOPE));
        }
        painter.text(
            pos2(top_left.x + swatch_width + 6.0, middle),
            Align2::LEFT_CENTER,
            row,
            font.clone(),
            LABEL,
        );
        y += line_height;
    }
    if let (Some(ramp), Some(title)) = (ramp, ramp_title) {
        painter.text(
            pos2(top_left.x, y + 1.0),
            Align2::LEFT_TOP,
            title,
            font.clone(),
            LABEL,
        );
        let over_width = if ramp.any_over() { 56.0 } else { 0.0 };
        let bar = Rect::from_min_size(
            pos2(top_left.x, y + 17.0),
            vec2(bar_width.min(width - over_width), 10.0),
        );
        let steps = 45;
        for step in 0..steps {
            let t0 = step as f32 / steps as f32;
            let t1 = (step + 1) as f32 / steps as f32;
            let cell = Rect::from_min_max(
                pos2(bar.left() + bar.width() * t0, bar.top()),
                pos2(bar.left() + bar.width() * t1 + 0.5, bar.bottom()),
            );
            painter.rect_filled(cell, 0.0, viridis(f64::from(t0 + t1) / 2.0));
        }
        let ticks = [
            (0.0, ramp.low, Align2::LEFT_TOP),
            (0.5, (ramp.low + ramp.high) / 2.0, Align2::CENTER_TOP),
            (1.0, ramp.high, Align2::RIGHT_TOP),
        ];
        for (at, share, align) in ticks {
            let x = bar.left() + bar.width() * at;
            painter.line_segment(
                [pos2(x, bar.bottom()), pos2(x, bar.bottom() + 4.0)],
                Stroke::new(1.0, LABEL),
            );
            painter.text(
                pos2(x, bar.bottom() + 5.0),
                align,
                format!("{:.0} %", share * 100.0),
                font.clone(),
                LABEL,
            );
        }
        if ramp.any_over() {
            let swatch = Rect::from_min_size(pos2(bar.right() + 8.0, bar.top()), vec2(14.0, 10.0));
            painter.rect_filled(swatch, 0.0, OVER_RATING);
            painter.text(
                pos2(swatch.left(), bar.bottom() + 5.0),
                Align2::LEFT_TOP,
                "> 100 %",
                font.clone(),
                LABEL,
            );
        }
    }
    backdrop
}

#[cfg(test)]
mod tests {
    use super::super::reach_layer::MapKey;
    use super::*;

    /// Runs `draw` with a painter on a fresh context and returns what it returned.
    fn with_painter<T>(draw: impl Fn(&Painter) -> T) -> T {
        let ctx = egui::Context::default();
        let mut out = None;
        let mut output = ctx.run_ui(egui::RawInput::default(), |ui| {
            out = Some(draw(ui.painter()));
        });
        // No renderer here: the font atlas's upload is not needed.
        output.textures_delta.clear();
        out.expect("the context ran one pass")
    }

    #[test]
    fn problem_lines_go_below_the_title_in_a_narrow_view() {
        let title = "Side view at base yaw -7.6°";
        let problems = vec!["OUT OF REACH by 92.7 mm".to_string()];
        let [(narrow_title, narrow_all), (wide_title, wide_all)] = [320.0, 900.0].map(|width| {
            with_painter(|painter| {
                let rect = Rect::from_min_size(pos2(0.0, 0.0), vec2(width, 400.0));
                let title_only = captions(painter, rect, title, "", &[]);
                (title_only, captions(painter, rect, title, "", &problems))
            })
        });
        // Narrow: the problem line is under the title, not over it.
        assert!(narrow_all.bottom() > narrow_title.bottom() + 10.0);
        // Wide: it sits beside the title, on the same line.
        assert!((wide_all.bottom() - wide_title.bottom()).abs() < 4.0);
    }

    #[test]
    fn the_scale_bar_steps_over_the_colour_legend() {
        // A narrow view zoomed out: the bar and its label would reach under the legend.
        let (legend, bar, alone) = with_painter(|painter| {
            let rect = Rect::from_min_size(pos2(0.0, 0.0), vec2(300.0, 400.0));
            let projection = super::super::projection::fit(rect, [-300.0, 300.0, -300.0, 300.0]);
            let state = EditorState::new(crate::editor::sample::sample_scene(), None);
            let arm = state.arm().expect("the sample's arm");
            let layer = |key| super::super::reach_layer::layer_now(painter.ctx(), arm, key);
            let at_angle = MapKey::for_view(&state, ViewKind::Side).map(layer);
            let any_angle = MapKey::any_angle(&state, ViewKind::Side).map(layer);
            let maps = ViewMaps {
                at_angle: at_angle.as_ref(),
                any_angle: any_angle.as_ref(),
            };
            let legend = reach_legend(painter, rect, maps, "tool pitch");
            let bar = scale_bar(painter, &projection, Some(legend));
            let alone = scale_bar(painter, &projection, None);
            (legend, bar, alone)
        });
        assert!(alone.intersects(legend), "the case this guards against");
        assert!(!bar.intersects(legend), "{bar:?} under {legend:?}");
    }
}
