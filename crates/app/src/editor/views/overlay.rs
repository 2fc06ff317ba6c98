//! Extra arms drawn over the edited one, such as the dry run's arm during playback: any pose,
//! in a colour and with a label of its own, dashed and hollow so the edited arm stays readable
//! underneath, with a small legend.

use armwright_kinematics::{Arm, forward};
use egui::{Align2, Color32, FontId, Painter, Pos2, Rect, Shape, Stroke, pos2, vec2};

use super::Plane;
use super::drawing::{BACKGROUND, LABEL, LINK, chain_on_screen};
use super::projection::Projection;

/// The dry run's arm (light grey: it sits over the sky-blue commanded arm and the viridis map
/// without borrowing a colour that already means something there).
pub const SIMULATED: Color32 = Color32::from_rgb(235, 235, 240);

/// The arm as the connected simulated device moves it (mint green: apart from the grey dry-run
/// arm, the sky-blue edited arm and the map's viridis ramp).
pub const DEVICE: Color32 = Color32::from_rgb(120, 225, 190);

/// One extra arm to draw over the edited one.
#[derive(Debug, Clone, PartialEq)]
pub struct ArmOverlay {
    /// Its joint positions, rad (revolute) or m (prismatic), one per joint.
    pub pose: Vec<f64>,
    /// What it is, for the legend ("simulated (dry run)").
    pub label: String,
    /// Its colour.
    pub colour: Color32,
}

/// Dash and gap of an overlaid arm's links, in points.
const DASH: f32 = 7.0;
const GAP: f32 = 4.0;

/// Draws `overlay` on the plane: dashed links, hollow joints, a hollow tool point. Draws
/// nothing for a pose the arm cannot take.
pub fn overlay_arm(
    painter: &Painter,
    projection: &Projection,
    plane: &dyn Plane,
    arm: &Arm,
    overlay: &ArmOverlay,
) {
    let Ok(chain) = forward(arm, &overlay.pose) else {
        return;
    };
    let points = chain_on_screen(projection, plane, &chain);
    let tool = points[points.len() - 1];
    let stroke = Stroke::new(2.0, overlay.colour);
    painter.extend(Shape::dashed_line(&points, stroke, DASH, GAP));
    for joint in &points[1..points.len() - 1] {
        painter.circle_stroke(*joint, 4.0, Stroke::new(1.5, overlay.colour));
    }
    painter.circle_stroke(tool, 6.0, stroke);
}

/// The legend of the edited arm and the overlaid ones at the view's left, from `top` down.
/// Returns the box it covers, if it drew one.
pub fn overlay_legend(
    painter: &Painter,
    rect: Rect,
    top: f32,
    overlays: &[ArmOverlay],
) -> Option<Rect> {
    if overlays.is_empty() {
        return None;
    }
    let font = FontId::proportional(11.0);
    let line_height = 16.0;
    let top_left = pos2(rect.left() + 10.0, top + 4.0);
    let rows = overlays.len() + 1;
    let widest = overlays
        .iter()
        .map(|overlay| overlay.label.as_str())
        .chain(std::iter::once(COMMANDED))
        .map(|text| {
            painter
                .layout_no_wrap(text.to_string(), font.clone(), LABEL)
                .size()
                .x
        })
        .fold(0.0_f32, f32::max);
    let width = 30.0 + widest;
    let backdrop = Rect::from_min_size(
        top_left - vec2(6.0, 4.0),
        vec2(width + 12.0, rows as f32 * line_height + 6.0),
    );
    painter.rect_filled(backdrop, 3.0, BACKGROUND.gamma_multiply(0.85));
    let swatch = |row: usize| {
        let y = top_left.y + line_height * (row as f32 + 0.5);
        [pos2(top_left.x, y), pos2(top_left.x + 22.0, y)]
    };
    let text_at = |row: usize| -> Pos2 { swatch(row)[1] + vec2(8.0, 0.0) };
    painter.line_segment(swatch(0), Stroke::new(3.0, LINK));
    painter.text(
        text_at(0),
        Align2::LEFT_CENTER,
        COMMANDED,
        font.clone(),
        LABEL,
    );
    for (index, overlay) in overlays.iter().enumerate() {
        let row = index + 1;
        painter.extend(Shape::dashed_line(
            &swatch(row),
            Stroke::new(2.0, overlay.colour),
            DASH,
            GAP,
        ));
        painter.text(
            text_at(row),
            Align2::LEFT_CENTER,
            &overlay.label,
            font.clone(),
            LABEL,
        );
    }
    Some(backdrop)
}

/// The legend's name for the edited arm.
const COMMANDED: &str = "commanded (edited) arm";
