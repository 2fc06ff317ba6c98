//! A reach-envelope and torque-use map as a hand-written SVG picture: cells shaded by torque use
//! on a continuous, colour-blind-safe ramp, unreachable cells pale grey, cells over the rating
//! cross-hatched, the envelope boundary, axes with a scale in mm, and a legend in % of rated
//! torque.

use std::fmt::Write;

/// Anchor colours of the ramp, evenly spaced from 0 % to 100 % torque use. They are five
/// samples of the viridis colour map (van der Walt & Smith, 2015, designed to stay readable
/// with the common colour-vision deficiencies and in grey scale); between anchors the ramp is
/// interpolated linearly.
const RAMP: [(u8, u8, u8); 5] = [
    (0x44, 0x01, 0x54),
    (0x3b, 0x52, 0x8b),
    (0x21, 0x91, 0x8c),
    (0x5e, 0xc9, 0x62),
    (0xfd, 0xe7, 0x25),
];

/// Shades the ramp is cut into when drawing, so that runs of equal shade merge into one
/// rectangle and the file stays small.
const SHADES: f64 = 64.0;

const UNREACHABLE: &str = "#e6e6e6";

/// The colour for a torque use share (0 → first anchor, 1 and more → last anchor), as `#rrggbb`.
pub(crate) fn ramp_colour(share: f64) -> String {
    let t = if share.is_finite() {
        share.clamp(0.0, 1.0)
    } else {
        1.0
    };
    let scaled = t * (RAMP.len() - 1) as f64;
    let index = (scaled.floor() as usize).min(RAMP.len() - 2);
    let f = scaled - index as f64;
    let (a, b) = (RAMP[index], RAMP[index + 1]);
    let mix = |x: u8, y: u8| (f64::from(x) + (f64::from(y) - f64::from(x)) * f).round() as u8;
    format!(
        "#{:02x}{:02x}{:02x}",
        mix(a.0, b.0),
        mix(a.1, b.1),
        mix(a.2, b.2)
    )
}

/// What to draw.
pub(crate) struct MapPicture<'a> {
    /// Heading: up to two lines.
    pub(crate) title: [String; 2],
    /// Under the legend's heading, what the ramp's 100 % means, such as the derating.
    pub(crate) legend_note: String,
    /// Names of the horizontal and vertical axes, with units.
    pub(crate) axis_labels: (&'a str, &'a str),
    /// Horizontal extent of the map, in mm.
    pub(crate) x_range_mm: (f64, f64),
    /// Vertical extent of the map, in mm.
    pub(crate) y_range_mm: (f64, f64),
    /// Cells along each side.
    pub(crate) cells: usize,
    /// Torque use share of cell (column, row from the bottom), or `None` when unreachable.
    pub(crate) value: &'a dyn Fn(usize, usize) -> Option<f64>,
    /// The envelope boundary as polylines of points in mm.
    pub(crate) boundary_mm: &'a [Vec<[f64; 2]>],
}

const MAP_PX: f64 = 600.0;
const MARGIN_LEFT: f64 = 70.0;
const MARGIN_TOP: f64 = 62.0;
const LEGEND_WIDTH: f64 = 220.0;

/// The SVG text.
pub(crate) fn render(picture: &MapPicture) -> String {
    let mut svg = String::new();
    let width = MARGIN_LEFT + MAP_PX + LEGEND_WIDTH;
    let height = MARGIN_TOP + MAP_PX + 60.0;
    let (x0, x1) = picture.x_range_mm;
    let (y0, y1) = picture.y_range_mm;
    let span = (x1 - x0).max(y1 - y0).max(1e-9);
    // Equal scale on both axes: the map is drawn to scale.
    let px_per_mm = MAP_PX / span;
    let to_px = |x: f64, y: f64| {
        (
            MARGIN_LEFT + (x - x0) * px_per_mm,
            MARGIN_TOP + MAP_PX - (y - y0) * px_per_mm,
        )
    };
    let _ = writeln!(
        svg,
        r#"<svg xmlns="http://www.w3.org/2000/svg" width="{width:.0}" height="{height:.0}" viewBox="0 0 {width:.0} {height:.0}" font-family="sans-serif" font-size="12">"#
    );
    let _ = writeln!(
        svg,
        r##"<defs><pattern id="over" width="6" height="6" patternUnits="userSpaceOnUse"><rect width="6" height="6" fill="{}"/><path d="M0,6 L6,0 M-1,1 L1,-1 M5,7 L7,5" stroke="#000000" stroke-width="1.2"/></pattern></defs>"##,
        ramp_colour(1.0)
    );
    let _ = writeln!(svg, r#"<rect width="100%" height="100%" fill="white"/>"#);
    for (line, text) in picture.title.iter().enumerate() {
        let _ = writeln!(
            svg,
            r#"<text x="{MARGIN_LEFT}" y="{}" font-size="{}">{}</text>"#,
            20 + 18 * line,
            if line == 0 { 15 } else { 13 },
            escape(text)
        );
    }
    draw_cells(&mut svg, picture, &to_px, px_per_mm);
    for line in picture.boundary_mm {
        let points: Vec<String> = line
            .iter()
            .map(|p| {
                let (x, y) = to_px(p[0], p[1]);
                format!("{x:.1},{y:.1}")
            })
            .collect();
        if points.len() >= 2 {
            let _ = writeln!(
                svg,
                r##"<polyline points="{}" fill="none" stroke="#d62728" stroke-width="1.5"/>"##,
                points.join(" ")
            );
        }
    }
    draw_axes(&mut svg, picture, &to_px, px_per_mm);
    draw_legend(&mut svg, &picture.legend_note);
    svg.push_str("</svg>\n");
    svg
}

fn draw_cells(
    svg: &mut String,
    picture: &MapPicture,
    to_px: &dyn Fn(f64, f64) -> (f64, f64),
    px_per_mm: f64,
) {
    let n = picture.cells.max(1);
    let cell_w = (picture.x_range_mm.1 - picture.x_range_mm.0) / n as f64;
    let cell_h = (picture.y_range_mm.1 - picture.y_range_mm.0) / n as f64;
    let fill_of = |share: Option<f64>| match share {
        None => UNREACHABLE.to_string(),
        // Anything not within the rating (also NaN) is drawn as over it.
        Some(s) if s <= 1.0 => ramp_colour((s * SHADES).floor() / SHADES),
        Some(_) => "url(#over)".to_string(),
    };
    for row in 0..n {
        let mut column = 0;
        while column < n {
            let fill = fill_of((picture.value)(column, row));
            let start = column;
            while column < n && fill_of((picture.value)(column, row)) == fill {
                column += 1;
            }
            let (x, y) = to_px(
                picture.x_range_mm.0 + start as f64 * cell_w,
                picture.y_range_mm.0 + (row + 1) as f64 * cell_h,
            );
            let w = (column - start) as f64 * cell_w * px_per_mm;
            let h = cell_h * px_per_mm;
            // A hair of overlap hides seams between rows in some viewers.
            let _ = writeln!(
                svg,
                r#"<rect x="{x:.2}" y="{y:.2}" width="{:.2}" height="{:.2}" fill="{fill}"/>"#,
                w + 0.3,
                h + 0.3
            );
        }
    }
}

/// A tick spacing of 1, 2 or 5 × 10ⁿ mm giving about six ticks across `span` mm.
fn tick_step(span: f64) -> f64 {
    let rough = (span / 6.0).max(1e-9);
    let power = 10f64.powf(rough.log10().floor());
    [1.0, 2.0, 5.0, 10.0]
        .iter()
        .map(|m| m * power)
        .find(|step| *step >= rough)
        .unwrap_or(10.0 * power)
}

fn draw_axes(
    svg: &mut String,
    picture: &MapPicture,
    to_px: &dyn Fn(f64, f64) -> (f64, f64),
    px_per_mm: f64,
) {
    let (x0, x1) = picture.x_range_mm;
    let (y0, y1) = picture.y_range_mm;
    let (left, bottom) = to_px(x0, y0);
    let (right, top) = to_px(x1, y1);
    let _ = writeln!(
        svg,
        r##"<rect x="{left:.1}" y="{top:.1}" width="{:.1}" height="{:.1}" fill="none" stroke="#333333"/>"##,
        right - left,
        bottom - top
    );
    let step = tick_step((x1 - x0).max(y1 - y0));
    let mut tick = (x0 / step).ceil() * step;
    while tick <= x1 + 1e-9 {
        let (x, _) = to_px(tick, y0);
        let _ = writeln!(
            svg,
            r##"<line x1="{x:.1}" y1="{bottom:.1}" x2="{x:.1}" y2="{:.1}" stroke="#333333"/><text x="{x:.1}" y="{:.1}" text-anchor="middle">{}</text>"##,
            bottom + 5.0,
            bottom + 18.0,
            tick_label(tick)
        );
        tick += step;
    }
    let mut tick = (y0 / step).ceil() * step;
    while tick <= y1 + 1e-9 {
        let (_, y) = to_px(x0, tick);
        let _ = writeln!(
            svg,
            r##"<line x1="{:.1}" y1="{y:.1}" x2="{left:.1}" y2="{y:.1}" stroke="#333333"/><text x="{:.1}" y="{:.1}" text-anchor="end">{}</text>"##,
            left - 5.0,
            left - 8.0,
            y + 4.0,
            tick_label(tick)
        );
        tick += step;
    }
    let _ = writeln!(
        svg,
        r#"<text x="{:.1}" y="{:.1}" text-anchor="middle">{}</text>"#,
        (left + right) / 2.0,
        bottom + 36.0,
        escape(picture.axis_labels.0)
    );
    let _ = writeln!(
        svg,
        r#"<text transform="translate({:.1},{:.1}) rotate(-90)" text-anchor="middle">{}</text>"#,
        left - 48.0,
        (top + bottom) / 2.0,
        escape(picture.axis_labels.1)
    );
    // Scale bar: one tick step long, under the map on the right.
    let bar = step * px_per_mm;
    let _ = writeln!(
        svg,
        r##"<line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="#000000" stroke-width="3"/><text x="{:.1}" y="{:.1}" text-anchor="middle">{} mm</text>"##,
        right - bar,
        bottom + 46.0,
        right,
        bottom + 46.0,
        right - bar / 2.0,
        bottom + 40.0,
        tick_label(step)
    );
}

fn tick_label(value: f64) -> String {
    let rounded = (value * 1000.0).round() / 1000.0;
    if rounded == 0.0 {
        "0".into()
    } else {
        format!("{rounded}")
    }
}

fn draw_legend(svg: &mut String, note: &str) {
    let x = MARGIN_LEFT + MAP_PX + 30.0;
    let (top, height) = (MARGIN_TOP + 46.0, 300.0);
    let _ = writeln!(
        svg,
        r#"<text x="{x:.1}" y="{:.1}">torque use</text><text x="{x:.1}" y="{:.1}">(% of rated torque)</text><text x="{x:.1}" y="{:.1}" font-size="11">{}</text>"#,
        top - 38.0,
        top - 24.0,
        top - 10.0,
        escape(note)
    );
    let _ = writeln!(
        svg,
        r#"<defs><linearGradient id="ramp" x1="0" y1="1" x2="0" y2="0">"#
    );
    for (index, _) in RAMP.iter().enumerate() {
        let share = index as f64 / (RAMP.len() - 1) as f64;
        let _ = writeln!(
            svg,
            r#"<stop offset="{share:.2}" stop-color="{}"/>"#,
            ramp_colour(share)
        );
    }
    let _ = writeln!(svg, "</linearGradient></defs>");
    let _ = writeln!(
        svg,
        r##"<rect x="{x:.1}" y="{top:.1}" width="24" height="{height:.1}" fill="url(#ramp)" stroke="#333333"/>"##
    );
    for pct in [0, 25, 50, 75, 100] {
        let y = top + height - height * f64::from(pct) / 100.0;
        let _ = writeln!(
            svg,
            r##"<line x1="{:.1}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="#333333"/><text x="{:.1}" y="{:.1}">{pct} %</text>"##,
            x + 24.0,
            x + 30.0,
            x + 34.0,
            y + 4.0
        );
    }
    let swatch = |svg: &mut String, y: f64, fill: &str, label: &str| {
        let _ = writeln!(
            svg,
            r##"<rect x="{x:.1}" y="{y:.1}" width="24" height="16" fill="{fill}" stroke="#333333"/><text x="{:.1}" y="{:.1}">{label}</text>"##,
            x + 34.0,
            y + 12.0
        );
    };
    swatch(svg, top + height + 20.0, "url(#over)", "over 100 %");
    swatch(svg, top + height + 44.0, UNREACHABLE, "out of reach");
    let _ = writeln!(
        svg,
        r##"<line x1="{x:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="#d62728" stroke-width="1.5"/><text x="{:.1}" y="{:.1}">envelope edge</text>"##,
        top + height + 76.0,
        x + 24.0,
        top + height + 76.0,
        x + 34.0,
        top + height + 80.0
    );
}

fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn brightness(colour: &str) -> f64 {
        let channel = |i: usize| f64::from(u8::from_str_radix(&colour[i..i + 2], 16).unwrap());
        // Rec. 709 luma weights.
        0.2126 * channel(1) + 0.7152 * channel(3) + 0.0722 * channel(5)
    }

    #[test]
    fn the_ramp_gets_brighter_all_the_way_up() {
        // A ramp that rises steadily in lightness reads in grey scale and with the common
        // colour-vision deficiencies (the design rule behind viridis).
        let mut previous = -1.0;
        for step in 0..=100 {
            let luma = brightness(&ramp_colour(f64::from(step) / 100.0));
            assert!(luma > previous, "step {step}");
            previous = luma;
        }
        assert_eq!(ramp_colour(0.0), "#440154");
        assert_eq!(ramp_colour(1.0), "#fde725");
        assert_eq!(ramp_colour(7.0), "#fde725");
        assert_eq!(ramp_colour(f64::NAN), "#fde725");
    }

    #[test]
    fn tick_steps_are_round_numbers() {
        assert_eq!(tick_step(600.0), 100.0);
        assert_eq!(tick_step(250.0), 50.0);
        assert_eq!(tick_step(90.0), 20.0);
    }

    #[test]
    fn a_small_map_draws_cells_boundary_and_legend() {
        let value = |column: usize, row: usize| match (column, row) {
            (0, _) => None,
            (1, _) => Some(0.5),
            _ => Some(1.5),
        };
        let boundary = vec![vec![[0.0, 0.0], [100.0, 100.0]]];
        let picture = MapPicture {
            title: ["top view <test>".into(), "second line".into()],
            legend_note: "rating derated to 50 %".into(),
            axis_labels: ("x (mm)", "y (mm)"),
            x_range_mm: (-150.0, 150.0),
            y_range_mm: (-150.0, 150.0),
            cells: 3,
            value: &value,
            boundary_mm: &boundary,
        };
        let svg = render(&picture);
        assert!(svg.starts_with("<svg"));
        assert!(svg.trim_end().ends_with("</svg>"));
        assert!(svg.contains("top view &lt;test&gt;"));
        assert!(svg.contains("second line"));
        assert!(svg.contains("rating derated to 50 %"));
        assert!(svg.contains(UNREACHABLE));
        assert!(svg.contains("url(#over)"));
        assert!(svg.contains(&ramp_colour(0.5)));
        assert!(svg.contains("<polyline"));
        assert!(svg.contains("% of rated torque"));
        assert!(svg.contains("100 %"));
        assert!(svg.contains("50 mm"), "scale bar");
        // Each row is three runs of different shade: 3 rows × 3 rectangles.
        let cell_rects = svg.matches("<rect x=").count();
        assert_eq!(
            cell_rects,
            9 + 1 + 1 + 2,
            "cells, frame, ramp bar, two swatches"
        );
    }
}
