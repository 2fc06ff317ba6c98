//! Names written beside things in a view (workspace objects, the selected waypoint), placed so
//! that no two overlap and none runs under the view's captions and legends.
//!
//! Labels of things drawn in the same place (a stack of cubes seen from above) become one label
//! naming them all; each label then takes the first free spot of a few around its thing (above,
//! below, right, left), in order of importance, and one with no free spot is left out rather
//! than written over another.

use egui::{Align2, Color32, FontId, Painter, Pos2, Rect, vec2};

use super::drawing::BACKGROUND;

/// Gap between a thing and its label, in points.
const GAP: f32 = 3.0;

/// Things whose boxes differ by less than this on every side are "in the same place", in points.
const SAME_PLACE: f32 = 4.0;

/// Names joined into one label before the rest are counted ("a, b, c +2").
const NAMES_JOINED: usize = 3;

/// One name to write beside a thing.
#[derive(Debug, Clone)]
pub struct Label {
    /// The text.
    pub text: String,
    /// The thing's box on screen (a point is a box of no size).
    pub beside: Rect,
    /// Text colour.
    pub colour: Color32,
    /// Font size, in points.
    pub size: f32,
    /// Higher is placed first.
    pub importance: u8,
}

/// Writes `labels` where each is free of the others and of `taken` (boxes already drawn:
/// captions, legends, the scale bar), inside `bounds`. Returns the boxes the written labels
/// cover, in screen points.
pub fn place_labels(
    painter: &Painter,
    labels: Vec<Label>,
    taken: &[Rect],
    bounds: Rect,
) -> Vec<Rect> {
    let mut groups: Vec<(Label, Vec<String>)> = Vec::new();
    for label in labels {
        match groups.iter_mut().find(|(first, _)| {
            first.colour == label.colour && same_place(first.beside, label.beside)
        }) {
            Some((first, names)) => {
                first.importance = first.importance.max(label.importance);
                if !names.contains(&label.text) {
                    names.push(label.text);
                }
            }
            None => {
                let names = vec![label.text.clone()];
                groups.push((label, names));
            }
        }
    }
    groups.sort_by_key(|group| std::cmp::Reverse(group.0.importance));
    let mut occupied: Vec<Rect> = taken.to_vec();
    let mut written = Vec::new();
    for (label, names) in groups {
        let text = joined(&names);
        let font = FontId::proportional(label.size);
        let galley = painter.layout_no_wrap(text, font, label.colour);
        let size = galley.size();
        let spot = candidates(label.beside, size).into_iter().find(|spot| {
            bounds.contains_rect(*spot) && !occupied.iter().any(|o| o.intersects(*spot))
        });
        if let Some(spot) = spot {
            // A dark backdrop keeps the name readable over the outlines and links under it.
            painter.rect_filled(spot.expand(1.5), 2.0, BACKGROUND.gamma_multiply(0.7));
            painter.galley(spot.min, galley, label.colour);
            occupied.push(spot);
            written.push(spot);
        }
    }
    written
}

fn same_place(a: Rect, b: Rect) -> bool {
    (a.min - b.min).abs().max_elem() < SAME_PLACE && (a.max - b.max).abs().max_elem() < SAME_PLACE
}

/// "a", "a, b", "a, b, c", "a, b, c +2".
fn joined(names: &[String]) -> String {
    let shown = names.len().min(NAMES_JOINED);
    let mut text = names[..shown].join(", ");
    if names.len() > shown {
        text.push_str(&format!(" +{}", names.len() - shown));
    }
    text
}

/// Steps further out a label may go when the spots right beside its thing are taken, in points.
const FURTHER: [f32; 3] = [0.0, 12.0, 24.0];

/// Where a label of `size` may go beside `thing`, best first: above, below, right, left, then
/// the same a step further out.
fn candidates(thing: Rect, size: egui::Vec2) -> Vec<Rect> {
    let at = |anchor: Pos2, align: Align2| align.anchor_size(anchor, size);
    FURTHER
        .iter()
        .flat_map(|out| {
            let thing = thing.expand(*out);
            [
                at(thing.center_top() - vec2(0.0, GAP), Align2::CENTER_BOTTOM),
                at(thing.center_bottom() + vec2(0.0, GAP), Align2::CENTER_TOP),
                at(
                    thing.right_center() + vec2(GAP + 2.0, 0.0),
                    Align2::LEFT_CENTER,
                ),
                at(
                    thing.left_center() - vec2(GAP + 2.0, 0.0),
                    Align2::RIGHT_CENTER,
                ),
            ]
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use egui::pos2;

    use super::*;

    fn with_painter<T>(draw: impl Fn(&Painter) -> T) -> T {
        let ctx = egui::Context::default();
        let mut out = None;
        let mut output = ctx.run_ui(egui::RawInput::default(), |ui| {
            out = Some(draw(ui.painter()));
        });
        output.textures_delta.clear();
        out.expect("the context ran one pass")
    }

    fn label(text: &str, beside: Rect, importance: u8) -> Label {
        Label {
            text: text.into(),
            beside,
            colour: Color32::WHITE,
            size: 11.0,
            importance,
        }
    }

    #[test]
    fn a_stack_seen_from_above_gets_one_label() {
        let cube = Rect::from_min_size(pos2(100.0, 100.0), vec2(30.0, 30.0));
        let bounds = Rect::from_min_size(pos2(0.0, 0.0), vec2(400.0, 400.0));
        let written = with_painter(|painter| {
            let labels = ["cube 1", "cube 2", "cube 3", "cube 4"]
                .into_iter()
                .map(|name| label(name, cube, 0))
                .collect();
            place_labels(painter, labels, &[], bounds)
        });
        assert_eq!(written.len(), 1);
        assert_eq!(
            joined(&["a".into(), "b".into(), "c".into(), "d".into(), "e".into()]),
            "a, b, c +2"
        );
    }

    #[test]
    fn labels_never_overlap_each_other_or_what_is_taken() {
        let bounds = Rect::from_min_size(pos2(0.0, 0.0), vec2(300.0, 300.0));
        let legend = Rect::from_min_size(pos2(90.0, 60.0), vec2(120.0, 30.0));
        let written = with_painter(|painter| {
            // Boxes 6 points apart in a row: their labels cannot all sit above them.
            let labels = (0..8)
                .map(|i| {
                    let x = 100.0 + 6.0 * i as f32;
                    let beside = Rect::from_min_size(pos2(x, 100.0), vec2(5.0, 5.0));
                    label(&format!("box number {i}"), beside, (i % 3) as u8)
                })
                .collect();
            place_labels(painter, labels, &[legend], bounds)
        });
        assert!(written.len() >= 2, "{written:?}");
        for (i, a) in written.iter().enumerate() {
            assert!(!a.intersects(legend), "{a:?} over the legend");
            assert!(bounds.contains_rect(*a));
            for b in &written[i + 1..] {
                assert!(!a.intersects(*b), "{a:?} over {b:?}");
            }
        }
    }
}
