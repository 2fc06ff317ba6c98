//! What the dry run found wrong, as the editor shows it: contacts (a link, or an object carried
//! in the gripper, overlapping an obstacle or another link, along the commanded plan or the dry
//! run) and stops where the arm has not settled. Both views shade a contact red at its pose —
//! the link (or carried object) and what it hits — with a label and a tooltip naming both
//! (`views/contacts.rs`); the timeline marks each contact's time in red and each unsettled stop in amber, and lists them;
//! the sequence marks an unsettled stop's row with its resting error.
//!
//! It also carries each pick or place's placement success (the share of placements within the
//! waypoint's tolerance), which the sequence shows per waypoint and the retime panel at its worst.
//!
//! [`DryRunMarks::of`] runs on the dry-run worker with the same clearance check as `armwright
//! simulate` (`workcell::SceneCell`) and the same placement estimate (`placement::placements_of`), so
//! the editor and the command line find the same contacts and the same shares.

use armwright_kinematics::{Arm, CarriedBox, ObstacleShape, Other, forward};
use armwright_trajectory::{Clearance, CommandedMotion, DryRun, TaskPlan};
use egui::{Color32, FontId, Painter, Rect, Ui, pos2};
use egui_plot::PlotTransform;
use nalgebra::{Point3, Vector3};

use crate::placement::{Placement, placements_of};
use crate::scene::{Arrival, Scene};
use crate::workcell::SceneCell;

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
