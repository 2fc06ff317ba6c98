//! `armwright envelope`: where the tool point can reach in a plane and how much of the servos'
//! derated torque holding it there takes; optionally drawn as an SVG picture.

use std::path::Path;
use std::time::Instant;

use armwright_kinematics::{MapOptions, MapView, ReachMap, reach_map, tool_pose};
use serde_json::json;

use super::report::{fail, load_scene, print_json, rounded};
use super::svg::{MapPicture, render};
use super::{Outcome, View};
use crate::scene::{Scene, save_text};

/// Most cells along a side the map takes (the kinematics crate's bound).
const MAX_CELLS: usize = 2000;

pub(crate) fn run(
    file: &Path,
    view: View,
    at: Option<f64>,
    cells: usize,
    json: bool,
    svg: Option<&Path>,
) -> Outcome {
    let (scene, arm) = match load_scene(file, json) {
        Ok(loaded) => loaded,
        Err(outcome) => return outcome,
    };
    if !(2..=MAX_CELLS).contains(&cells) {
        let message = format!("--cells must be 2 to {MAX_CELLS}, got {cells}");
        return fail(json, &message, json!({}), Outcome::Unreadable);
    }
    if let Some(value) = at.filter(|v| !v.is_finite()) {
        let message = format!("--at: {value} is not a finite number");
        return fail(json, &message, json!({}), Outcome::Unreadable);
    }
    // Top view: the home tool point's height unless given; side view: yaw 0 unless given.
    let at = match (view, at) {
        (_, Some(value)) => value,
        (View::Top, None) => tool_pose(&arm, &arm.home_pose())
            .map(|tool| tool.translation.vector.z * 1e3)
            .unwrap_or(0.0),
        (View::Side, None) => 0.0,
    };
    let map_view = match view {
        View::Top => MapView::Top { height: at * 1e-3 },
        View::Side => MapView::Side {
            yaw: at.to_radians(),
        },
    };
    let options = MapOptions {
        cells,
        derating: scene.timing.torque_derating_pct / 100.0,
        payload_mass: None,
        ..MapOptions::default()
    };
    let start = Instant::now();
    let map = reach_map(&arm, &map_view, &options);
    let time_ms = start.elapsed().as_secs_f64() * 1e3;
    if let Some(out) = svg
        && let Err(error) = save_text(&picture(&scene, file, view, at, &map), out)
    {
        let message = format!("cannot write {}: {error}", out.display());
        return fail(json, &message, json!({}), Outcome::Unreadable);
    }
    let extent = map.extent();
    if json {
        let mut out = json!({
            "ok": true,
            "view": match view { View::Top => "top", View::Side => "side" },
            "cells": map.cells(),
            "cell_mm": rounded(map.cell_size() * 1e3, 6),
            "extent_mm": {
                "u_min": rounded(extent.u_min * 1e3, 6),
                "u_max": rounded(extent.u_max * 1e3, 6),
                "v_min": rounded(extent.v_min * 1e3, 6),
                "v_max": rounded(extent.v_max * 1e3, 6),
            },
            "reachable_pct": rounded(map.reachable_share() * 100.0, 4),
            "over_torque_pct": rounded(map.over_torque_share() * 100.0, 4),
            "farthest_reach_mm": rounded(map.farthest_reach() * 1e3, 4),
            "torque_derating_pct": scene.timing.torque_derating_pct,
            "time_ms": rounded(time_ms, 3),
        });
        match view {
            View::Top => out["at_mm"] = json!(at),
            View::Side => out["at_deg"] = json!(at),
        }
        if let Some(path) = svg {
            out["svg"] = json!(path.display().to_string());
        }
        print_json(&out);
    } else {
        println!("{}", heading(view, at));
        println!(
            "reachable     {:.1} % of {} × {} cells ({:.2} mm each)",
            map.reachable_share() * 100.0,
            map.cells(),
            map.cells(),
            map.cell_size() * 1e3
        );
        println!(
            "over torque   {:.1} % of the reachable cells (derating {} %)",
            map.over_torque_share() * 100.0,
            scene.timing.torque_derating_pct
        );
        println!(
            "farthest      {:.1} mm from the base axis",
            map.farthest_reach() * 1e3
        );
        println!("time          {time_ms:.1} ms");
        if let Some(path) = svg {
            println!("picture       {}", path.display());
        }
    }
    Outcome::Done
}

fn heading(view: View, at: f64) -> String {
    match view {
        View::Top => format!("top view, horizontal plane at z = {at} mm"),
        View::Side => format!("side view, vertical plane through the base axis at yaw {at}°"),
    }
}

fn picture(scene: &Scene, file: &Path, view: View, at: f64, map: &ReachMap) -> String {
    let extent = map.extent();
    let value = |column: usize, row: usize| map.torque_use(column, row);
    let boundary: Vec<Vec<[f64; 2]>> = map
        .boundary()
        .iter()
        .map(|line| line.iter().map(|p| [p[0] * 1e3, p[1] * 1e3]).collect())
        .collect();
    let name = file
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let title = [
        format!(
            "{name}: {} arm, {}",
            scene.arm.shape.word(),
            heading(view, at)
        ),
        format!(
            "{:.1} % of the cells reachable, {:.1} % of those over torque; farthest reach {:.1} mm",
            map.reachable_share() * 100.0,
            map.over_torque_share() * 100.0,
            map.farthest_reach() * 1e3
        ),
    ];
    let axis_labels = match view {
        View::Top => ("x (mm)", "y (mm)"),
        View::Side => ("distance from the base axis (mm)", "z (mm)"),
    };
    render(&MapPicture {
        title,
        legend_note: format!(
            "100 % = stall torque × {} %",
            scene.timing.torque_derating_pct
        ),
        axis_labels,
        x_range_mm: (extent.u_min * 1e3, extent.u_max * 1e3),
        y_range_mm: (extent.v_min * 1e3, extent.v_max * 1e3),
        cells: map.cells(),
        value: &value,
        boundary_mm: &boundary,
    })
}
