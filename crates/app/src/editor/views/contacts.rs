//! The dry run's contacts on a view: each shaded red at its pose — the link (or carried object)
//! and what it hits — with a label and a tooltip naming both (the marks themselves are
//! `editor/dry_run_marks.rs`'s).

use egui::{Painter, Pos2, Rect, Sense, Shape, Stroke, Ui, pos2};
use nalgebra::Vector3;

use super::labels::Label;
use super::{Plane, Projection, ViewKind};
use crate::editor::dry_run_marks::{CONTACT, DryRunMarks, Solid};
use crate::scene::Scene;

/// Shades every contact of `marks` red on a view: the hitter and what it hits, with a hover
/// region whose tooltip (and accessible name) is the contact's sentence. Each contact's label
/// ("forearm hits table (0.84 s)") goes into `labels`, ahead of the names of things, for the
/// view's label placement (`views/labels.rs`), so that labels of
/// contacts close together neither overlap each other nor anything else.
#[allow(clippy::too_many_arguments)] // one view's drawing context, passed as the views pass it
pub fn paint_in_view(
    ui: &Ui,
    painter: &Painter,
    projection: &Projection,
    plane: &dyn Plane,
    kind: ViewKind,
    scene: &Scene,
    marks: &DryRunMarks,
    labels: &mut Vec<Label>,
) {
    for (index, contact) in marks.contacts.iter().enumerate() {
        let other = shade(painter, projection, plane, kind, &contact.other);
        let hitter = shade(painter, projection, plane, kind, &contact.hitter);
        let around = match (hitter, other) {
            (Some(a), Some(b)) => a.union(b),
            (Some(a), None) | (None, Some(a)) => a,
            (None, None) => continue,
        };
        labels.push(Label {
            text: format!(
                "{} hits {} ({:.2} s)",
                contact.link, contact.object, contact.time
            ),
            beside: around,
            colour: CONTACT,
            size: 12.0,
            importance: CONTACT_IMPORTANCE,
        });
        let sentence = contact.sentence(scene);
        let id = ui
            .scope_id()
            .with(("contact", kind == ViewKind::Top, index));
        ui.interact(around.intersect(projection.rect), id, Sense::hover())
            .accessible_name(sentence.clone())
            .on_hover_text(sentence);
    }
}

/// Importance of a contact's label among a view's labels: above the selected waypoint's (1) and
/// the workspace objects' (0).
const CONTACT_IMPORTANCE: u8 = 2;

/// Shades one solid red on a view; returns the screen area it covers.
fn shade(
    painter: &Painter,
    projection: &Projection,
    plane: &dyn Plane,
    kind: ViewKind,
    solid: &Solid,
) -> Option<Rect> {
    let fill = CONTACT.gamma_multiply(0.45);
    let stroke = Stroke::new(1.5, CONTACT);
    let on_screen = |point: &Vector3<f64>| projection.to_screen(plane.project(point));
    match solid {
        Solid::Capsule { start, end, radius } => {
            let (a, b) = (on_screen(start), on_screen(end));
            let width = (2.0 * radius * 1e3 * projection.points_per_mm).max(3.0) as f32;
            painter.line_segment([a, b], Stroke::new(width, fill));
            painter.circle_filled(a, width / 2.0, fill);
            painter.circle_filled(b, width / 2.0, fill);
            painter.line_segment([a, b], stroke);
            Some(Rect::from_two_pos(a, b).expand(width / 2.0))
        }
        Solid::Corners(points) => {
            let hull = convex_hull(points.iter().map(on_screen).collect());
            let area = Rect::from_points(&hull);
            painter.add(Shape::convex_polygon(hull, fill, stroke));
            Some(area)
        }
        Solid::Table { height } => match kind {
            // Seen from above the table is everywhere: the label says it.
            ViewKind::Top => None,
            ViewKind::Side => {
                let rect = projection.rect;
                let y = projection.to_screen([0.0, height * 1e3]).y;
                let band = Rect::from_x_y_ranges(rect.x_range(), y..=y + 6.0);
                painter.rect_filled(band, 0.0, fill);
                painter.line_segment([pos2(rect.left(), y), pos2(rect.right(), y)], stroke);
                None
            }
        },
    }
}

/// The convex hull of screen points, in order (Andrew's monotone chain).
fn convex_hull(mut points: Vec<Pos2>) -> Vec<Pos2> {
    points.sort_by(|a, b| a.x.total_cmp(&b.x).then(a.y.total_cmp(&b.y)));
    points.dedup();
    if points.len() < 3 {
        return points;
    }
    let cross = |o: Pos2, a: Pos2, b: Pos2| (a.x - o.x) * (b.y - o.y) - (a.y - o.y) * (b.x - o.x);
    let mut hull: Vec<Pos2> = Vec::with_capacity(2 * points.len());
    for pass in [false, true] {
        let start = hull.len();
        let ordered: Box<dyn Iterator<Item = &Pos2>> = if pass {
            Box::new(points.iter().rev())
        } else {
            Box::new(points.iter())
        };
        for &p in ordered {
            while hull.len() >= start + 2
                && cross(hull[hull.len() - 2], hull[hull.len() - 1], p) <= 0.0
            {
                hull.pop();
            }
            hull.push(p);
        }
        hull.pop();
    }
    hull
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_hull_of_a_square_and_its_centre_is_the_square() {
        let hull = convex_hull(vec![
            pos2(0.0, 0.0),
            pos2(1.0, 0.0),
            pos2(0.5, 0.5),
            pos2(1.0, 1.0),
            pos2(0.0, 1.0),
        ]);
        assert_eq!(hull.len(), 4);
        assert!(!hull.contains(&pos2(0.5, 0.5)));
    }

    /// The built-in sample with both drill points lowered into the table (shoulder level): two
    /// moves, 30° of base turn apart, each with a contact, so the contacts lie close together.
    fn two_contacts_close_together() -> (Scene, DryRunMarks) {
        use crate::scene::build_arm;
        use crate::task::{dry_run_of, plan_of};

        let mut scene = crate::editor::sample::sample_scene();
        for index in [2, 3] {
            scene.waypoints[index].joints_deg_or_mm[1] = 0.0;
        }
        let arm = build_arm(&scene.arm).expect("the sample's arm");
        let plan = plan_of(&scene, &arm).expect("the sequence plans");
        let run = dry_run_of(&scene, &arm, &plan).expect("the dry run runs");
        let marks = DryRunMarks::of(&scene, &arm, &plan, &run).expect("marks");
        (scene, marks)
    }

    #[test]
    fn labels_of_contacts_close_together_do_not_overlap_in_either_view() {
        use crate::editor::views::{SidePlane, TopPlane, place_labels};

        let (scene, marks) = two_contacts_close_together();
        let moves: Vec<usize> = marks.contacts.iter().map(|c| c.waypoint).collect();
        assert!(
            moves.contains(&2) && moves.contains(&3),
            "contacts on the moves {moves:?}"
        );
        let rect = Rect::from_min_size(pos2(0.0, 0.0), egui::vec2(480.0, 360.0));
        for kind in [ViewKind::Top, ViewKind::Side] {
            let top = TopPlane;
            let side = SidePlane { yaw: 0.0 };
            let (plane, centre_mm): (&dyn Plane, [f64; 2]) = match kind {
                ViewKind::Top => (&top, [120.0, 0.0]),
                ViewKind::Side => (&side, [120.0, 60.0]),
            };
            let projection = Projection {
                rect,
                centre_mm,
                points_per_mm: 1.2,
            };
            let ctx = egui::Context::default();
            let mut written = Vec::new();
            let mut labels = Vec::new();
            let mut output = ctx.run_ui(egui::RawInput::default(), |ui| {
                paint_in_view(
                    ui,
                    ui.painter(),
                    &projection,
                    plane,
                    kind,
                    &scene,
                    &marks,
                    &mut labels,
                );
                // Where the contacts sit, the labels' own spots would cross: each contact's
                // label right under its shading, as they were written before.
                written = place_labels(ui.painter(), labels.clone(), &[], rect);
            });
            output.textures_delta.clear();
            assert_eq!(labels.len(), marks.contacts.len(), "{kind:?}");
            let crossing = labels.iter().enumerate().any(|(i, a)| {
                labels[i + 1..]
                    .iter()
                    .any(|b| a.beside.expand(14.0).intersects(b.beside.expand(14.0)))
            });
            assert!(crossing, "{kind:?}: the contacts are not close together");
            // Labels at one place join into one (seen from the side, both moves' contacts lie
            // at one place); the others each find a free spot.
            let places = if kind == ViewKind::Top { 2 } else { 1 };
            assert!(written.len() >= places, "{kind:?}: {written:?}");
            for (i, a) in written.iter().enumerate() {
                assert!(rect.contains_rect(*a), "{kind:?}: {a:?} outside the view");
                for b in &written[i + 1..] {
                    assert!(!a.intersects(*b), "{kind:?}: {a:?} over {b:?}");
                }
            }
        }
    }
}
