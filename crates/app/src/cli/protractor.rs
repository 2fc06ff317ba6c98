//! `armwright protractor`: a printable protractor for measuring calibration points, drawn as an
//! SVG page in millimetres so that it prints to scale at 100 %.
//!
//! A full circle, 0° to the right and angles growing counter-clockwise (signed, −170° to 180°),
//! the direction a joint turns for a positive angle when its axis points at the viewer (the
//! right-hand rule, common practice); a tick every degree, longer every 5° and labelled every
//! 10°; a centre cross for the servo horn's screw; a 100 mm bar to check the print scale.

use std::fmt::Write;
use std::path::Path;

use super::Outcome;
use super::report::fail;
use crate::scene::save_text;

/// Page width and height, in mm (ISO 216 A4, portrait).
const PAGE_MM: (f64, f64) = (210.0, 297.0);
/// Centre of the dial on the page, in mm from the top-left corner.
const CENTRE_MM: (f64, f64) = (105.0, 125.0);
/// Radius of the dial's outer edge, in mm.
const RADIUS_MM: f64 = 90.0;
/// Length of the scale-check bar, in mm.
const BAR_MM: f64 = 100.0;

/// The protractor page as SVG text. Lengths in the picture are millimetres.
pub(crate) fn protractor_svg() -> String {
    let (width, height) = PAGE_MM;
    let (cx, cy) = CENTRE_MM;
    let mut svg = String::new();
    let _ = writeln!(
        svg,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{width}mm\" height=\"{height}mm\" \
         viewBox=\"0 0 {width} {height}\" font-family=\"sans-serif\">"
    );
    let _ = writeln!(
        svg,
        "<title>Armwright protractor: print at 100 % (actual size), not fit to page</title>"
    );
    let _ = writeln!(
        svg,
        "<text x=\"{cx}\" y=\"16\" font-size=\"5\" text-anchor=\"middle\">Armwright protractor \
         for calibration points</text>"
    );
    let _ = writeln!(
        svg,
        "<text x=\"{cx}\" y=\"23\" font-size=\"3.2\" text-anchor=\"middle\">Print at 100 % \
         (actual size, no fit to page). Centre the cross on the joint's axis, 0° along the \
         link's zero direction.</text>"
    );
    let _ = writeln!(
        svg,
        "<circle cx=\"{cx}\" cy=\"{cy}\" r=\"{RADIUS_MM}\" fill=\"none\" stroke=\"black\" \
         stroke-width=\"0.3\"/>"
    );
    for degree in -179..=180 {
        let long = degree % 10 == 0;
        let medium = degree % 5 == 0;
        let length = if long {
            8.0
        } else if medium {
            5.0
        } else {
            3.0
        };
        let (inner, outer) = (RADIUS_MM - length, RADIUS_MM);
        let (x1, y1) = on_dial(inner, degree);
        let (x2, y2) = on_dial(outer, degree);
        let stroke = if long { 0.3 } else { 0.15 };
        let _ = writeln!(
            svg,
            "<line x1=\"{x1:.3}\" y1=\"{y1:.3}\" x2=\"{x2:.3}\" y2=\"{y2:.3}\" stroke=\"black\" \
             stroke-width=\"{stroke}\"/>"
        );
        if long {
            let (x, y) = on_dial(RADIUS_MM - 12.5, degree);
            let _ = writeln!(
                svg,
                "<text x=\"{x:.3}\" y=\"{y:.3}\" font-size=\"3\" text-anchor=\"middle\" \
                 dominant-baseline=\"middle\">{degree}</text>"
            );
        }
    }
    // Centre cross and the zero line, for lining up with the joint's axis and link.
    let _ = writeln!(
        svg,
        "<line x1=\"{}\" y1=\"{cy}\" x2=\"{}\" y2=\"{cy}\" stroke=\"black\" stroke-width=\"0.2\"/>",
        cx - 6.0,
        cx + RADIUS_MM
    );
    let _ = writeln!(
        svg,
        "<line x1=\"{cx}\" y1=\"{}\" x2=\"{cx}\" y2=\"{}\" stroke=\"black\" stroke-width=\"0.2\"/>",
        cy - 6.0,
        cy + 6.0
    );
    let _ = writeln!(
        svg,
        "<circle cx=\"{cx}\" cy=\"{cy}\" r=\"1.5\" fill=\"none\" stroke=\"black\" \
         stroke-width=\"0.2\"/>"
    );
    let _ = writeln!(
        svg,
        "<text x=\"{}\" y=\"{}\" font-size=\"3\" text-anchor=\"middle\">positive angles turn \
         this way ↺</text>",
        cx,
        cy - 20.0
    );
    // The scale check.
    let bar_y = cy + RADIUS_MM + 30.0;
    let bar_x = cx - BAR_MM / 2.0;
    let _ = writeln!(
        svg,
        "<rect x=\"{bar_x}\" y=\"{bar_y}\" width=\"{BAR_MM}\" height=\"2\" fill=\"black\"/>"
    );
    for mark in 0..=10 {
        let x = bar_x + f64::from(mark) * BAR_MM / 10.0;
        let _ = writeln!(
            svg,
            "<line x1=\"{x}\" y1=\"{}\" x2=\"{x}\" y2=\"{}\" stroke=\"black\" stroke-width=\"0.2\"/>",
            bar_y - 2.0,
            bar_y + 4.0
        );
    }
    let _ = writeln!(
        svg,
        "<text x=\"{cx}\" y=\"{}\" font-size=\"3.2\" text-anchor=\"middle\">This bar is \
         {BAR_MM} mm long when printed to scale: measure it before you trust a reading.</text>",
        bar_y + 10.0
    );
    let _ = writeln!(
        svg,
        "<text x=\"{cx}\" y=\"{}\" font-size=\"3.2\" text-anchor=\"middle\">Keep clear of a \
         powered arm while you read it; keep a hard power cut-off within reach.</text>",
        bar_y + 16.0
    );
    svg.push_str("</svg>\n");
    svg
}

/// A point on the dial at `radius` mm and `degree` degrees (0 to the right, counter-clockwise
/// positive), in page millimetres (y grows downward on the page).
fn on_dial(radius: f64, degree: i32) -> (f64, f64) {
    let angle = f64::from(degree).to_radians();
    let (cx, cy) = CENTRE_MM;
    (cx + radius * angle.cos(), cy - radius * angle.sin())
}

/// Runs `protractor`: writes the page to `out`, or to standard output.
pub(crate) fn run(out: Option<&Path>) -> Outcome {
    let svg = protractor_svg();
    match out {
        Some(path) => match save_text(&svg, path) {
            Ok(()) => {
                println!(
                    "wrote {}: print it at 100 % (actual size) and check the 100 mm bar",
                    path.display()
                );
                Outcome::Done
            }
            Err(error) => fail(
                false,
                &format!("cannot write {}: {error}", path.display()),
                serde_json::json!({}),
                Outcome::Unreadable,
            ),
        },
        None => {
            print!("{svg}");
            Outcome::Done
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ninety_degrees_is_straight_up_the_page_one_radius_from_the_centre() {
        let (x, y) = on_dial(RADIUS_MM, 90);
        assert!((x - CENTRE_MM.0).abs() < 1e-9);
        assert!((y - (CENTRE_MM.1 - RADIUS_MM)).abs() < 1e-9);
    }

    #[test]
    fn the_dial_and_the_bar_fit_on_the_page() {
        let (cx, cy) = CENTRE_MM;
        assert!(cx - RADIUS_MM > 10.0 && cx + RADIUS_MM < PAGE_MM.0 - 10.0);
        assert!(cy + RADIUS_MM + 46.0 < PAGE_MM.1 - 10.0);
    }

    #[test]
    fn every_tenth_degree_is_labelled_once() {
        let svg = protractor_svg();
        let labels = svg.matches("dominant-baseline=\"middle\">").count();
        assert_eq!(labels, 36);
        assert!(svg.contains(">-170</text>") && svg.contains(">180</text>"));
        assert!(!svg.contains(">-180</text>"));
    }
}
