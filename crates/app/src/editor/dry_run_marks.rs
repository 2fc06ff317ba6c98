//! What the dry run found wrong, as the editor shows it: contacts (a link, or an object carried
//! in the gripper, overlapping an obstacle or another link, along the commanded plan or the dry
//! run) and stops where the arm has not settled. Both views shade a contact red at its pose —
//! the link (or carried object) and what it hits — with a label and a tooltip naming both; the
//! timeline marks each contact's time in red and each unsettled stop in amber, and lists them;
//! the sequence marks an unsettled stop's row with its resting error.
//!
//! It also carries each pick or place's placement success (the share of placements within the
//! waypoint's tolerance), which the sequence shows per waypoint and the retime panel at its worst.
//!
//! [`DryRunMarks::of`] runs on the dry-run worker with the same clearance check as `armwright
//! simulate` (`cli/clearance.rs`) and the same placement estimate (`placement::placements_of`), so
//! the editor and the command line find the same contacts and the same shares.

use armwright_kinematics::{Arm, CarriedBox, ObstacleShape, Other, forward};
use armwright_trajectory::{Clearance, CommandedMotion, DryRun, TaskPlan};
use egui::{Color32, FontId, Painter, Pos2, Rect, Sense, Shape, Stroke, Ui, pos2};
use egui_plot::PlotTransform;
use nalgebra::{Point3, Vector3};

use super::views::{Label, Plane, Projection, ViewKind};
use crate::cli::clearance::SceneCell;
use crate::placement::{Placement, placements_of};
use crate::scene::{Arrival, Scene};

/// Contacts (red: the colour of a stop, as the emergency stop's).
pub const CONTACT: Color32 = Color32::from_rgb(230, 40, 40);
/// Unsettled stops (amber, a warning short of a contact).
pub const UNSETTLED: Color32 = Color32::from_rgb(240, 170, 0);

/// A solid at the contact pose, in the base frame, in m.
#[derive(Debug, Clone, PartialEq)]
pub enum Solid {
    /// A link's capsule: the segment's ends and the radius.
    Capsule {
        /// One end.
        start: Vector3<f64>,
        /// The other end.
        end: Vector3<f64>,
        /// Radius, m.
        radius: f64,
    },
    /// A box's eight corners.
    Corners([Vector3<f64>; 8]),
    /// Everything below the table top at this height.
    Table {
        /// Height of the table top, m.
        height: f64,
    },
}

/// One contact as the editor shows it.
#[derive(Debug, Clone, PartialEq)]
pub struct ContactMark {
    /// "commanded" (along the plan) or "simulated" (along the dry run).
    pub motion: &'static str,
    /// The waypoint whose move it happens on.
    pub waypoint: usize,
    /// When it starts, in s.
    pub time: f64,
    /// What hits: a link's name, or a carried object's ("cube (carried by the gripper)").
    pub link: String,
    /// What it hits: an obstacle's name or a link's.
    pub object: String,
    /// The deepest overlap of the pair on the move, in mm.
    pub depth_mm: f64,
    /// The link (or carried object) at the contact pose.
    pub hitter: Solid,
    /// What it hits, at the contact pose.
    pub other: Solid,
}

impl ContactMark {
    /// One line naming the contact: "contact at 0.84 s (commanded): upper arm hits crate, 3.2
    /// mm deep, on the move into \"drop\"".
    pub fn sentence(&self, scene: &Scene) -> String {
        format!(
            "contact at {:.3} s ({}): {} hits {}, {:.1} mm deep, on the move into \"{}\"",
            self.time,
            self.motion,
            self.link,
            self.object,
            self.depth_mm,
            scene
                .waypoints
                .get(self.waypoint)
                .map_or("?", |w| w.name.as_str())
        )
    }
}

/// A stop where the arm has not settled within the settle band.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct UnsettledMark {
    /// The waypoint.
    pub waypoint: usize,
    /// When it is judged, in s: when the gripper acts, else when the arm leaves.
    pub time: f64,
    /// Whether the gripper acts there (before the arm has settled).
    pub gripper_acts: bool,
    /// How far the arm comes to rest from the target, in mm.
    pub resting_error_mm: f64,
}

impl UnsettledMark {
    /// One line: "not settled at \"pick\" (1.20 s) when the gripper acts; resting error 1.3 mm".
    pub fn sentence(&self, scene: &Scene) -> String {
        format!(
            "not settled at \"{}\" ({:.2} s) {}; resting error {:.2} mm",
            scene
                .waypoints
                .get(self.waypoint)
                .map_or("?", |w| w.name.as_str()),
            self.time,
            if self.gripper_acts {
                "when the gripper acts"
            } else {
                "when the arm leaves"
            },
            self.resting_error_mm
        )
    }
}

/// The contacts and unsettled stops of one plan and dry run.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct DryRunMarks {
    /// Each move's first contact, along the plan then along the dry run.
    pub contacts: Vec<ContactMark>,
    /// Stops not settled by the time they are judged, in order.
    pub unsettled: Vec<UnsettledMark>,
    /// Per waypoint, its placement estimate where the gripper acts (a pick or place), as
    /// `simulate --json` gives it.
    pub placements: Vec<Option<Placement>>,
}

impl DryRunMarks {
    /// The marks of `plan` and its dry run `run` for `scene` on `arm`.
    ///
    /// # Errors
    /// A sentence naming the waypoint whose placement cannot be estimated.
    pub fn of(
        scene: &Scene,
        arm: &Arm,
        plan: &TaskPlan,
        run: &DryRun,
    ) -> Result<DryRunMarks, String> {
        let cell = SceneCell::of(scene, arm);
        let commanded = cell.along_plan(arm, plan);
        let simulated = cell.along_dry_run(arm, plan, &run.trace);
        let n = arm.joint_count();
        let mut contacts = Vec::new();
        let mut pose = vec![0.0; n];
        let mut add = |clearance: &Clearance, motion: &'static str, simulated: bool| {
            for contact in clearance.contacts() {
                if simulated {
                    let trace = &run.trace;
                    let step = trace.step.max(1e-9);
                    let index = ((contact.time / step).round().max(0.0) as usize)
                        .min(trace.len().saturating_sub(1));
                    if trace.is_empty() {
                        continue;
                    }
                    pose.copy_from_slice(&trace.actual_at(index)[..n]);
                } else {
                    plan.positions_at(contact.time.min(plan.duration()), &mut pose);
                }
                let Some((hitter, other)) = solids(&cell, arm, &pose, contact) else {
                    continue;
                };
                contacts.push(ContactMark {
                    motion,
                    waypoint: contact.waypoint,
                    time: contact.time,
                    link: cell.hitter_name(contact.pair.link, contact.carried),
                    object: cell.object_name(contact.pair.other).to_string(),
                    depth_mm: contact.depth * 1e3,
                    hitter,
                    other,
                });
            }
        };
        add(&commanded, "commanded", false);
        add(&simulated, "simulated", true);
        let unsettled = scene
            .waypoints
            .iter()
            .zip(&run.waypoints)
            .zip(plan.timings())
            .enumerate()
            .filter(|(_, ((waypoint, result), _))| {
                waypoint.arrival == Arrival::Stop && !result.settled
            })
            .map(|(index, ((_, result), timing))| UnsettledMark {
                waypoint: index,
                time: result.gripper_acts.unwrap_or(timing.departure),
                gripper_acts: result.gripper_acts.is_some(),
                resting_error_mm: result.resting_error * 1e3,
            })
            .collect();
        let placements = placements_of(scene, arm, run)
            .map_err(|error| format!("cannot estimate placement success: {error}"))?;
        Ok(DryRunMarks {
            contacts,
            unsettled,
            placements,
        })
    }

    /// Waypoint `index`'s placement estimate, when the gripper acts there.
    pub fn placement_at(&self, index: usize) -> Option<&Placement> {
        self.placements.get(index).and_then(Option::as_ref)
    }

    /// The pick or place least likely to land within its tolerance: its waypoint and estimate.
    pub fn worst_placement(&self) -> Option<(usize, &Placement)> {
        self.placements
            .iter()
            .enumerate()
            .filter_map(|(index, p)| p.as_ref().map(|p| (index, p)))
            .min_by(|a, b| a.1.estimate.success.total_cmp(&b.1.estimate.success))
    }

    /// The unsettled mark of waypoint `index`, if it has one.
    pub fn unsettled_at(&self, index: usize) -> Option<&UnsettledMark> {
        self.unsettled.iter().find(|mark| mark.waypoint == index)
    }
}

/// The hitter and what it hits, at the pose `positions`.
fn solids(
    cell: &SceneCell,
    arm: &Arm,
    positions: &[f64],
    contact: &armwright_trajectory::Contact,
) -> Option<(Solid, Solid)> {
    let chain = forward(arm, positions).ok()?;
    let placed = cell.shape().place(&chain);
    let capsule = |link: usize| {
        let (start, end) = *placed.segments().get(link)?;
        let radius = cell.shape().links().get(link)?.radius;
        Some(Solid::Capsule { start, end, radius })
    };
    let hitter = match contact.carried {
        None => capsule(contact.pair.link)?,
        Some(object) => {
            let carry = cell
                .carried()
                .iter()
                .find(|carry| carry.object.obstacle == object)?;
            carried_corners(&carry.object, chain.tool())
        }
    };
    let other = match contact.pair.other {
        Other::Link(link) => capsule(link)?,
        Other::Obstacle(index) => match cell.obstacles().get(index)?.shape {
            ObstacleShape::Table { height } => Solid::Table { height },
            ObstacleShape::Box { centre, half_size } => {
                Solid::Corners(corners(|local| centre + local.component_mul(&half_size)))
            }
        },
    };
    Some((hitter, other))
}

fn carried_corners(object: &CarriedBox, tool: &nalgebra::Isometry3<f64>) -> Solid {
    let placed = object.placed(tool);
    Solid::Corners(corners(|local| {
        (placed * Point3::from(local.component_mul(&object.half_size))).coords
    }))
}

/// The eight corners from the unit cube's corners (±1 on each axis).
fn corners(to_base: impl Fn(Vector3<f64>) -> Vector3<f64>) -> [Vector3<f64>; 8] {
    std::array::from_fn(|corner| {
        let sign = |bit: usize| if corner & bit == 0 { -1.0 } else { 1.0 };
        to_base(Vector3::new(sign(1), sign(2), sign(4)))
    })
}

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

/// Marks the contacts (red) and unsettled stops (amber) on the timeline's plot. Every mark gets
/// its line; a label that would cross one already drawn is left out (the list above the plot
/// names every mark).
pub fn paint_on_timeline(painter: &Painter, transform: &PlotTransform, marks: &DryRunMarks) {
    let frame = *transform.frame();
    let bounds = transform.bounds();
    let visible = |t: f64| t >= bounds.min()[0] && t <= bounds.max()[0];
    let mut lines: Vec<(f64, Color32, String)> = marks
        .contacts
        .iter()
        .filter(|c| visible(c.time))
        .map(|c| (c.time, CONTACT, format!("{} × {}", c.link, c.object)))
        .chain(marks.unsettled.iter().filter(|s| visible(s.time)).map(|s| {
            let text = format!("unsettled {:.1} mm", s.resting_error_mm);
            (s.time, UNSETTLED, text)
        }))
        .collect();
    lines.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut labelled: Vec<Rect> = Vec::new();
    for (time, colour, text) in lines {
        let x = transform.position_from_point_x(time);
        painter.rect_filled(
            Rect::from_x_y_ranges(x - 1.5..=x + 1.5, frame.y_range()),
            0.0,
            colour,
        );
        let galley = painter.layout_no_wrap(text, FontId::proportional(11.0), colour);
        let at = pos2(x + 3.0, frame.top() + 16.0);
        let rect = Rect::from_min_size(at, galley.size());
        if labelled.iter().all(|taken| !taken.intersects(rect)) {
            painter.galley(at, galley, colour);
            labelled.push(rect);
        }
    }
}

/// Lists the contacts and unsettled stops above the timeline's plot, one line each.
pub fn list_on_timeline(ui: &mut Ui, scene: &Scene, marks: &DryRunMarks) {
    for contact in &marks.contacts {
        ui.colored_label(CONTACT, contact.sentence(scene));
    }
    for stop in &marks.unsettled {
        ui.colored_label(UNSETTLED, stop.sentence(scene));
    }
}

/// Marks a sequence row: a pick or place with its placement success ("placed 97 %", amber below
/// [`PLACEMENT_WARNING`], the tolerance in its tooltip), and a stop that has not settled ("unsettled: 1.3 mm
/// off"), each with a sentence as tooltip. Shows nothing for a settled row without a pick or
/// place.
pub fn sequence_marker(ui: &mut Ui, scene: &Scene, marks: Option<&DryRunMarks>, index: usize) {
    let Some(marks) = marks else {
        return;
    };
    if let Some(placement) = marks.placement_at(index) {
        let text = placement_text(placement);
        let label = if placement.estimate.success < PLACEMENT_WARNING {
            ui.colored_label(UNSETTLED, &text)
        } else {
            ui.label(&text)
        };
        label.on_hover_text(placement_sentence(scene, index, placement));
    }
    if let Some(stop) = marks.unsettled_at(index) {
        ui.colored_label(
            UNSETTLED,
            format!("unsettled: {:.1} mm off", stop.resting_error_mm),
        )
        .on_hover_text(stop.sentence(scene));
    }
}

/// Placement success below which a pick or place is shown in amber: 0.9 (our choice: one miss
/// in ten is more than a hobby cell can live with unattended).
pub const PLACEMENT_WARNING: f64 = 0.9;

/// "placed 97 %": short, to fit the sequence's row.
pub fn placement_text(placement: &Placement) -> String {
    format!("placed {:.0} %", placement.estimate.success * 100.0)
}

/// One line on a pick or place: "\"drop\": 97 % of placements land within 2 mm (mean error 0.61
/// mm, 95 % within 1.42 mm; 4000 seeded draws)".
pub fn placement_sentence(scene: &Scene, index: usize, placement: &Placement) -> String {
    let estimate = &placement.estimate;
    format!(
        "\"{}\": {:.0} % of placements land within {} mm (mean error {:.2} mm, 95 % within {:.2} mm; {} seeded draws)",
        scene.waypoints.get(index).map_or("?", |w| w.name.as_str()),
        estimate.success * 100.0,
        placement.tolerance_mm,
        estimate.mean_error * 1e3,
        estimate.p95_error * 1e3,
        estimate.draws
    )
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
        use super::super::views::{SidePlane, TopPlane, place_labels};

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
