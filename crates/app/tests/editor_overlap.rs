//! No text is written over other text: every bundled sample, connected to the simulated device,
//! each tab of the tools panel, with the timeline showing the dry run, and once more with a target out of reach (a problem line
//! in both views), in windows of 1280 × 800 and 1600 × 1000 points.
//!
//! egui hands every piece of text it draws to the renderer as a text shape with its position and
//! laid-out glyphs; the test takes the visible box of each row of each one (the row's glyph
//! bounds cut to its clip rectangle, so text scrolled out of sight does not count; turned text
//! as one box) and fails on any two that cross.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod editor_common;

use armwright::editor::{ADD_INPUT_LABEL, ChannelStopLink, Editor, ToolsTab};
use egui::accesskit::Role;
use egui::epaint::ClippedShape;
use egui::{Event, Rect, Shape};
use egui_kittest::kittest::Queryable;

use editor_common::{
    EditorHarness, click_tab, connect, harness_of_size, options, sample_scenes, scratch, settle,
    wait_for_dry_run, wait_for_reach_maps,
};

/// One piece of text on screen: what it says and the box it covers, in points.
#[derive(Debug, Clone)]
struct Text {
    text: String,
    rect: Rect,
}

/// Overlaps smaller than this on either side are anti-aliasing fringes, not text over text, in
/// points.
const SLACK: f32 = 1.0;

/// Pairs of texts allowed to cross, each with why: (part of one, part of the other, reason).
/// None so far.
const ALLOWED: &[(&str, &str, &str)] = &[];

/// Every text shape of the last frame with its visible box.
fn texts(shapes: &[ClippedShape]) -> Vec<Text> {
    fn collect(shape: &Shape, clip: Rect, found: &mut Vec<Text>) {
        match shape {
            Shape::Vec(shapes) => {
                for shape in shapes {
                    collect(shape, clip, found);
                }
            }
            Shape::Text(text) => {
                let at = text.pos.to_vec2();
                // Each row on its own: a wrapped label that starts beside a word on its first
                // line covers no more than its rows do. Turned text keeps its whole box.
                let boxes: Vec<(String, Rect)> = if text.angle == 0.0 {
                    text.galley
                        .rows
                        .iter()
                        .map(|row| {
                            let words: String = row.glyphs.iter().map(|glyph| glyph.chr).collect();
                            (
                                words,
                                row.visuals.mesh_bounds.translate(row.pos.to_vec2() + at),
                            )
                        })
                        .collect()
                } else {
                    vec![(text.galley.text().to_owned(), text.visual_bounding_rect())]
                };
                for (words, rect) in boxes {
                    let words = words.trim();
                    let visible = rect.intersect(clip);
                    if !words.is_empty() && visible.width() > 0.0 && visible.height() > 0.0 {
                        found.push(Text {
                            text: words.to_string(),
                            rect: visible,
                        });
                    }
                }
            }
            _ => {}
        }
    }
    let mut found = Vec::new();
    for clipped in shapes {
        collect(&clipped.shape, clipped.clip_rect, &mut found);
    }
    found
}

fn allowed(a: &str, b: &str) -> bool {
    ALLOWED
        .iter()
        .any(|(x, y, _)| (a.contains(x) && b.contains(y)) || (a.contains(y) && b.contains(x)))
}

/// The pairs of texts that cross, described.
fn overlaps(found: &[Text]) -> Vec<String> {
    let mut crossing = Vec::new();
    for (index, a) in found.iter().enumerate() {
        for b in &found[index + 1..] {
            let common = a.rect.intersect(b.rect);
            if common.width() > SLACK && common.height() > SLACK && !allowed(&a.text, &b.text) {
                crossing.push(format!(
                    "\"{}\" at {:?} crosses \"{}\" at {:?}",
                    a.text, a.rect, b.text, b.rect
                ));
            }
        }
    }
    crossing
}

/// Moves the pointer off the window (no tooltip, no hover) and runs frames until it settles.
fn pointer_away(harness: &mut EditorHarness) {
    harness.event(Event::PointerGone);
    harness.run_steps(4);
}

/// Checks the screen as it is now; failures go to `problems` under `screen`.
fn check_screen(harness: &mut EditorHarness, screen: &str, problems: &mut Vec<String>) -> usize {
    pointer_away(harness);
    let found = texts(&harness.output().shapes);
    assert!(
        found.len() > 40,
        "{screen}: only {} texts drawn: {:?}",
        found.len(),
        found.iter().map(|t| &t.text).collect::<Vec<_>>()
    );
    // The views, their reach legends and the timeline are among what was checked.
    for part in [
        "Top view",
        "Side view",
        "reach slice at z =",
        "torque use",
        "Timeline",
        "Sequence (",
    ] {
        assert!(
            found.iter().any(|text| text.text.contains(part)),
            "{screen}: no \"{part}\" drawn"
        );
    }
    problems.extend(
        overlaps(&found)
            .into_iter()
            .map(|line| format!("{screen}: {line}")),
    );
    found.len()
}

fn no_overlaps_at(size: [f32; 2]) {
    let mut problems = Vec::new();
    let mut screens = 0;
    for path in sample_scenes() {
        let name = path
            .file_name()
            .map(|name| name.to_string_lossy().into_owned())
            .unwrap_or_default();
        let dir = scratch(&format!("overlap-{}-{name}", size[0]));
        let (link, _requests) = ChannelStopLink::new();
        let editor = Editor::open(Some(path.clone()), Box::new(link), options(&dir, 3600));
        let mut harness = harness_of_size(editor, size);
        harness.run_steps(3);
        settle(&mut harness);
        assert_eq!(
            harness.state().state.view.dialog,
            None,
            "{name} opened a dialog"
        );
        wait_for_dry_run(&mut harness);
        wait_for_reach_maps(&mut harness);
        let tools_left = |harness: &EditorHarness| {
            harness
                .get_by_role_and_label(Role::Button, "Link")
                .rect()
                .left()
        };
        let left_at_start = tools_left(&harness);
        // Connected to the simulated device, as the window opens: the Link, Calibrate and Follow
        // tabs show the device, the views its arm and that arm's legend.
        connect(&mut harness);
        for (tab, label) in [
            (ToolsTab::Link, "Link"),
            (ToolsTab::Retime, "Retime"),
            (ToolsTab::Arm, "Arm"),
            (ToolsTab::Calibrate, "Calibrate"),
            (ToolsTab::Follow, "Follow"),
        ] {
            click_tab(&mut harness, label);
            assert_eq!(harness.state().state.view.tools_tab, tab);
            let screen = format!("{name} at {}×{}, {label} tab", size[0], size[1]);
            let count = check_screen(&mut harness, &screen, &mut problems);
            eprintln!("{screen}: {count} texts");
            screens += 1;
            // Each tab keeps the tools panel's width (the Arm tab used to widen it for good).
            let left = tools_left(&harness);
            if left != left_at_start {
                problems.push(format!(
                    "{screen}: the tools panel's left edge moved from {left_at_start} to {left}"
                ));
            }
            if tab == ToolsTab::Arm {
                // The input arm's form, with a new row and the problems it lists, scrolled into
                // view at the foot of the tab.
                harness
                    .get_by_label("Input arm (analog inputs)")
                    .click_accesskit();
                harness.run_steps(2);
                harness.get_by_label(ADD_INPUT_LABEL).click_accesskit();
                harness.run_steps(2);
                harness.get_by_label(ADD_INPUT_LABEL).scroll_to_me();
                harness.run_steps(2);
                let screen = format!("{screen}, input arm form");
                check_screen(&mut harness, &screen, &mut problems);
                screens += 1;
            }
        }
        // Out of reach: a problem line in both views.
        harness
            .get_by_label("tool point x (mm)")
            .set_value_accesskit(2000.0);
        harness.run_steps(2);
        assert!(
            !harness.state().state.reach_problems().is_empty(),
            "{name}: 2 m out is not out of reach"
        );
        let screen = format!("{name} at {}×{}, out of reach", size[0], size[1]);
        check_screen(&mut harness, &screen, &mut problems);
        screens += 1;
    }
    assert!(
        problems.is_empty(),
        "{} overlaps on {screens} screens:\n{}",
        problems.len(),
        problems.join("\n")
    );
}

#[test]
fn no_text_crosses_other_text_at_1280_by_800() {
    no_overlaps_at([1280.0, 800.0]);
}

#[test]
fn no_text_crosses_other_text_at_1600_by_1000() {
    no_overlaps_at([1600.0, 1000.0]);
}

#[test]
fn the_check_finds_text_written_over_text() {
    // Two labels painted at the same spot must be caught, two side by side must not.
    let ctx = egui::Context::default();
    let mut output = ctx.run_ui(egui::RawInput::default(), |ui| {
        let painter = ui.painter();
        let font = egui::FontId::proportional(14.0);
        let colour = egui::Color32::WHITE;
        painter.text(
            egui::pos2(10.0, 10.0),
            egui::Align2::LEFT_TOP,
            "first",
            font.clone(),
            colour,
        );
        painter.text(
            egui::pos2(14.0, 12.0),
            egui::Align2::LEFT_TOP,
            "second",
            font.clone(),
            colour,
        );
        painter.text(
            egui::pos2(10.0, 60.0),
            egui::Align2::LEFT_TOP,
            "apart",
            font.clone(),
            colour,
        );
        painter.text(
            egui::pos2(80.0, 60.0),
            egui::Align2::LEFT_TOP,
            "beside",
            font,
            colour,
        );
    });
    // No renderer here: the font atlas's upload is not needed.
    output.textures_delta.clear();
    let found = texts(&output.shapes);
    assert_eq!(found.len(), 4);
    let crossing = overlaps(&found);
    assert_eq!(crossing.len(), 1, "{crossing:?}");
    assert!(crossing[0].contains("first") && crossing[0].contains("second"));
}
