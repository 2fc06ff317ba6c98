//! One view on screen: pointer input (zoom, pan, dragging the tool point, tool angle by wheel)
//! and the drawing, returning what the user asked for as a [`Command`].

use egui::{PointerButton, Pos2, Sense, Ui, Vec2};

use super::contacts;
use super::drawing::{self, ViewMaps};
use super::labels::place_labels;
use super::overlay::{ArmOverlay, overlay_arm, overlay_legend};
use super::projection::{Projection, fit};
use super::{Plane, SidePlane, TopPlane, ViewKind};
use crate::editor::command::Command;
use crate::editor::state::EditorState;

/// Screen distance within which a press grabs the tool point, in points.
const GRAB_RADIUS: f32 = 16.0;

/// Tool-angle change per point of wheel scroll over the tool point, in rad (0.1°).
const ANGLE_PER_SCROLL: f64 = 0.1 * std::f64::consts::PI / 180.0;

/// Zoom factor per point of wheel scroll: 120 points (one notch on many mice) zoom by about 27 %.
const ZOOM_PER_SCROLL: f64 = 0.002;

/// A view's zoom, pan and drag state, kept between frames.
#[derive(Debug, Clone, Default)]
pub struct Camera {
    projection: Option<Projection>,
    /// The tool point is being dragged; offset from the pointer to the tool point, in points.
    grab: Option<Vec2>,
    /// Where the tool point was drawn last frame.
    tool_on_screen: Option<Pos2>,
}

impl Camera {
    /// Where the tool point was drawn in the last frame, in screen points.
    pub fn tool_on_screen(&self) -> Option<Pos2> {
        self.tool_on_screen
    }

    /// The mapping used in the last frame.
    pub fn projection(&self) -> Option<&Projection> {
        self.projection.as_ref()
    }
}

/// What a view does with the pointer, shown in the status bar while the pointer is over one.
pub const VIEW_HINT: &str = "drag the tool point to move the arm · wheel: zoom (over the tool \
                             point: tool angle) · right or middle drag: pan · double-click: fit \
                             the arm";

/// Shows one view filling the space `ui` has left, with `overlays` drawn over the edited arm.
pub fn show_view(
    ui: &mut Ui,
    state: &EditorState,
    kind: ViewKind,
    camera: &mut Camera,
    reach: ViewMaps<'_>,
    overlays: &[ArmOverlay],
) -> Command {
    let (response, painter) = ui.allocate_painter(ui.available_size(), Sense::click_and_drag());
    let response = response.accessible_name(match kind {
        ViewKind::Top => "top view",
        ViewKind::Side => "side view",
    });
    let rect = response.rect;
    // Held during a drag (`EditorState::hold_side_view`): the plane, its shading and its title
    // stay put under the pointer.
    let yaw = state.side_view_yaw();
    let plane: &dyn Plane = match kind {
        ViewKind::Top => &TopPlane,
        ViewKind::Side => &SidePlane { yaw },
    };
    if response.double_clicked() {
        // Fit the arm again after zooming and panning.
        camera.projection = None;
    }
    let mut projection = camera
        .projection
        .unwrap_or_else(|| fit(rect, default_extent(state, kind)));
    if projection.rect.size() != rect.size() && camera.projection.is_some() {
        // Keep the scale and centre when the window resizes.
        projection.rect = rect;
    }
    projection.rect = rect;

    let mut command = Command::None;
    let tool_point = state.tool_point();
    let near_tool = |pos: Pos2| {
        camera
            .tool_on_screen
            .is_some_and(|tool| tool.distance(pos) <= GRAB_RADIUS)
    };
    if response.drag_started_by(PointerButton::Primary)
        && let Some(origin) = ui.input(|input| input.pointer.press_origin())
        && near_tool(origin)
        && let Some(tool) = camera.tool_on_screen
    {
        camera.grab = Some(tool - origin);
    }
    if let Some(offset) = camera.grab {
        if response.dragged_by(PointerButton::Primary)
            && let (Some(pointer), Some(tool_point)) = (response.interact_pointer_pos(), tool_point)
        {
            let at = projection.to_plane(pointer + offset);
            let target = plane.target(at, &tool_point);
            command = Command::DragToolPoint {
                target: [target.x, target.y, target.z],
            };
        }
        if !response.dragged() {
            camera.grab = None;
        }
    }
    if response.dragged_by(PointerButton::Secondary) || response.dragged_by(PointerButton::Middle) {
        projection.pan_by(response.drag_delta());
    }
    if let Some(pointer) = response.hover_pos() {
        let (scroll, zoom) = ui.input(|input| (input.smooth_scroll_delta().y, input.zoom_delta()));
        if scroll != 0.0 {
            if camera.grab.is_some() || near_tool(pointer) {
                command = command.then(Command::SetToolAngle(
                    state.tool_angle + f64::from(scroll) * ANGLE_PER_SCROLL,
                ));
            } else {
                projection.zoom_about(pointer, (f64::from(scroll) * ZOOM_PER_SCROLL).exp());
            }
        }
        if zoom != 1.0 {
            projection.zoom_about(pointer, f64::from(zoom));
        }
    }

    let clipped = painter.with_clip_rect(rect);
    drawing::grid(&clipped, &projection);
    drawing::reach(&clipped, &projection, reach);
    let mut labels = Vec::new();
    drawing::workspace(&clipped, &projection, plane, kind, state, &mut labels);
    drawing::waypoints(&clipped, &projection, plane, state, &mut labels);
    camera.tool_on_screen =
        drawing::arm(&clipped, &projection, plane, state, camera.grab.is_some());
    if let Some(arm) = state.arm() {
        for overlay in overlays {
            overlay_arm(&clipped, &projection, plane, arm, overlay);
        }
    }
    if let Some(found) = state.dry_run_found() {
        contacts::paint_in_view(
            ui,
            &clipped,
            &projection,
            plane,
            kind,
            &state.scene,
            found,
            &mut labels,
        );
    }
    // Captions and legends first, then the names of things wherever they are free of them.
    let (title, subtitle) = view_title(state, kind, yaw, reach);
    let captions = drawing::captions(&clipped, rect, &title, &subtitle, &state.reach_problems());
    let mut taken = vec![captions];
    // Names stay off the tool point, which is grabbed there, and off the base.
    taken.extend(
        camera
            .tool_on_screen
            .map(|tool| egui::Rect::from_center_size(tool, egui::vec2(30.0, 30.0))),
    );
    let base = projection.to_screen(plane.project(&nalgebra::Vector3::zeros()));
    taken.push(egui::Rect::from_center_size(base, egui::vec2(26.0, 26.0)));
    taken.extend(overlay_legend(&clipped, rect, captions.bottom(), overlays));
    let legend = (reach.at_angle.is_some() || reach.any_angle.is_some())
        .then(|| drawing::reach_legend(&clipped, rect, reach, drawing::tool_angle_name(state)));
    taken.extend(legend);
    taken.push(drawing::scale_bar(&clipped, &projection, legend));
    let _ = place_labels(&clipped, labels, &taken, rect.shrink(2.0));
    camera.projection = Some(projection);
    command
}

/// A view's title and the line under it: which slice of the reach maps it shows (the top view's
/// height, with the table's; the side view's yaw is in its title).
fn view_title(
    state: &EditorState,
    kind: ViewKind,
    yaw: f64,
    reach: ViewMaps<'_>,
) -> (String, String) {
    match kind {
        ViewKind::Top => {
            let height_mm = reach
                .at_angle
                .and_then(|layer| match layer.key.view {
                    armwright_kinematics::MapView::Top { height } => Some(height * 1e3),
                    armwright_kinematics::MapView::Side { .. } => None,
                })
                .or_else(|| state.tool_point().map(|point| point.z * 1e3));
            let mut subtitle = match height_mm {
                Some(height_mm) => format!("reach slice at z = {height_mm:.0} mm"),
                None => String::new(),
            };
            if let Some(table_mm) = state.scene.workspace.table_height_mm {
                if !subtitle.is_empty() {
                    subtitle.push_str(" · ");
                }
                subtitle.push_str(&format!("table at z = {table_mm:.0} mm"));
            }
            ("Top view (X right, Y up)".to_string(), subtitle)
        }
        ViewKind::Side => (
            format!("Side view at base yaw {:.1}°", yaw.to_degrees()),
            "reach slice in this vertical plane".to_string(),
        ),
    }
}

/// The plane extent (mm: left, right, bottom, top) a view first shows: the arm's reach around
/// the base.
fn default_extent(state: &EditorState, kind: ViewKind) -> [f64; 4] {
    let reach = reach_estimate_mm(state).max(100.0);
    match kind {
        ViewKind::Top => [-reach * 1.05, reach * 1.05, -reach * 1.05, reach * 1.05],
        ViewKind::Side => [-reach * 0.45, reach * 1.1, -reach * 0.25, reach * 1.1],
    }
}

/// Sum of the straight distances base → joints → tool point at the home pose, in mm: a bound
/// on how far the arm reaches, good enough to frame the views.
fn reach_estimate_mm(state: &EditorState) -> f64 {
    let Some(arm) = state.arm() else {
        return 300.0;
    };
    let Ok(chain) = armwright_kinematics::forward(arm, &arm.home_pose()) else {
        return 300.0;
    };
    let mut previous = nalgebra::Vector3::zeros();
    let mut total = 0.0;
    for point in chain
        .frames()
        .iter()
        .map(|frame| frame.translation.vector)
        .chain(std::iter::once(chain.tool().translation.vector))
    {
        total += (point - previous).norm();
        previous = point;
    }
    total * 1e3
}

#[cfg(test)]
mod tests {
    use egui::{Event, Modifiers, MouseWheelSource, MouseWheelUnit, TouchPhase, vec2};
    use egui_kittest::Harness;

    use super::*;
    use crate::editor::sample::sample_scene;

    type Setup = (EditorState, Camera, Vec<Command>);

    fn harness() -> Harness<'static, Setup> {
        Harness::builder().with_size([600.0, 500.0]).build_ui_state(
            |ui, (state, camera, commands): &mut Setup| {
                let command =
                    show_view(ui, state, ViewKind::Side, camera, ViewMaps::default(), &[]);
                if command != Command::None {
                    commands.push(command);
                }
            },
            (
                EditorState::new(sample_scene(), None),
                Camera::default(),
                Vec::new(),
            ),
        )
    }

    fn wheel_at(harness: &mut Harness<'static, Setup>, at: Pos2) {
        harness.hover_at(at);
        harness.step();
        harness.event(Event::MouseWheel {
            unit: MouseWheelUnit::Point,
            delta: vec2(0.0, 60.0),
            phase: TouchPhase::Move,
            source: MouseWheelSource::Wheel,
            modifiers: Modifiers::NONE,
        });
        harness.run_steps(20);
    }

    #[test]
    fn the_wheel_over_the_tool_point_turns_the_tool_angle() {
        let mut harness = harness();
        harness.run_steps(2);
        let angle = harness.state().0.tool_angle;
        let scale = harness.state().1.projection().map(|p| p.points_per_mm);
        let Some(tool) = harness.state().1.tool_on_screen() else {
            panic!("no tool point drawn");
        };
        wheel_at(&mut harness, tool);
        let commands = &harness.state().2;
        assert!(
            commands
                .iter()
                .any(|command| matches!(command, Command::SetToolAngle(a) if *a > angle)),
            "{commands:?}"
        );
        // The view did not zoom.
        assert_eq!(
            harness.state().1.projection().map(|p| p.points_per_mm),
            scale
        );
    }

    #[test]
    fn the_wheel_elsewhere_zooms_and_asks_for_nothing() {
        let mut harness = harness();
        harness.run_steps(2);
        let scale = harness
            .state()
            .1
            .projection()
            .map_or(0.0, |p| p.points_per_mm);
        wheel_at(&mut harness, egui::pos2(40.0, 40.0));
        let zoomed = harness
            .state()
            .1
            .projection()
            .map_or(0.0, |p| p.points_per_mm);
        assert!(zoomed > scale * 1.05, "{scale} → {zoomed}");
        assert!(harness.state().2.is_empty());
    }
}
