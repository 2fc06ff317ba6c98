//! The reach envelope and torque-use map behind each view, computed off the UI thread.
//!
//! A map depends on the arm, the torque derating and the view's plane (the top view's height,
//! the side view's yaw). When they change, a worker thread runs `reach_map` and turns the cells
//! into a picture; the UI thread only uploads that picture as a texture and draws one quad and
//! the boundary polylines. At most one job runs per view: a change while one runs is picked up
//! when it ends.

use std::sync::mpsc::{Receiver, Sender, channel};

use armwright_kinematics::{Arm, MapOptions, MapView, ReachMap, reach_map};
use egui::{Color32, ColorImage, TextureHandle, TextureOptions};

use super::ViewKind;
use crate::editor::state::EditorState;

/// Cells along each side of a map: 160 × 160 cells keep a map near 2 mm on a 300 mm arm and
/// take tens of ms on a worker.
const CELLS: usize = 160;

/// Torque use at the top of the colour ramp, as a share of the rating (150 %).
pub const RAMP_TOP: f64 = 1.5;

/// Opacity of the shading over the grid.
const SHADE_ALPHA: f32 = 0.55;

/// What a map was made for; a new map is needed when this changes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MapKey {
    /// The plane.
    pub view: MapView,
    /// The derating, as a share of stall torque.
    pub derating: f64,
}

impl MapKey {
    /// The key a view needs now: the top view's plane at the tool point's height (to 1 mm),
    /// the side view's at its yaw (to 0.5°).
    pub fn for_view(state: &EditorState, kind: ViewKind) -> Option<MapKey> {
        let derating = state.scene.timing.torque_derating_pct / 100.0;
        let view = match kind {
            ViewKind::Top => {
                let height = state.tool_point()?.z;
                MapView::Top {
                    height: (height * 1e3).round() * 1e-3,
                }
            }
            ViewKind::Side => {
                let step = 0.5f64.to_radians();
                MapView::Side {
                    yaw: (state.side_view_yaw() / step).round() * step,
                }
            }
        };
        Some(MapKey { view, derating })
    }
}

/// A finished map and its picture.
pub struct MapLayer {
    /// What it was made for.
    pub key: MapKey,
    /// The map (m, shares of rated torque).
    pub map: ReachMap,
    /// The shading, one texel per cell, top row first.
    pub texture: TextureHandle,
}

struct Finished {
    kind: ViewKind,
    key: MapKey,
    map: ReachMap,
    image: ColorImage,
}

/// Both views' maps and the worker that makes them.
pub struct ReachLayers {
    layers: [Option<MapLayer>; 2],
    running: [Option<MapKey>; 2],
    sender: Sender<Finished>,
    receiver: Receiver<Finished>,
}

impl Default for ReachLayers {
    fn default() -> ReachLayers {
        let (sender, receiver) = channel();
        ReachLayers {
            layers: [None, None],
            running: [None, None],
            sender,
            receiver,
        }
    }
}

fn slot(kind: ViewKind) -> usize {
    match kind {
        ViewKind::Top => 0,
        ViewKind::Side => 1,
    }
}

impl ReachLayers {
    /// Takes finished maps, and starts a job for each view whose map is out of date and has none
    /// running. Cheap: no map work happens here.
    pub fn update(&mut self, ctx: &egui::Context, state: &EditorState) {
        for finished in self.receiver.try_iter().collect::<Vec<_>>() {
            let index = slot(finished.kind);
            self.running[index] = None;
            let texture = ctx.load_texture(
                format!("armwright reach map {index}"),
                finished.image,
                TextureOptions::NEAREST,
            );
            self.layers[index] = Some(MapLayer {
                key: finished.key,
                map: finished.map,
                texture,
            });
        }
        let Some(arm) = state.arm() else {
            return;
        };
        for kind in [ViewKind::Top, ViewKind::Side] {
            let index = slot(kind);
            let Some(wanted) = MapKey::for_view(state, kind) else {
                continue;
            };
            let shown = self.layers[index].as_ref().map(|layer| layer.key);
            if shown == Some(wanted) || self.running[index].is_some() {
                continue;
            }
            self.running[index] = Some(wanted);
            let arm = arm.clone();
            let sender = self.sender.clone();
            let ctx = ctx.clone();
            let spawned = std::thread::Builder::new()
                .name("armwright reach map".into())
                .spawn(move || {
                    let (map, image) = make_map(&arm, wanted);
                    let _ = sender.send(Finished {
                        kind,
                        key: wanted,
                        map,
                        image,
                    });
                    ctx.request_repaint();
                });
            if spawned.is_err() {
                self.running[index] = None;
            }
        }
        if self.running.iter().any(Option::is_some) {
            ctx.request_repaint_after(std::time::Duration::from_millis(30));
        }
    }

    /// The newest finished map of a view.
    pub fn layer(&self, kind: ViewKind) -> Option<&MapLayer> {
        self.layers[slot(kind)].as_ref()
    }

    /// Whether a map job is running.
    pub fn busy(&self) -> bool {
        self.running.iter().any(Option::is_some)
    }
}

fn make_map(arm: &Arm, key: MapKey) -> (ReachMap, ColorImage) {
    let options = MapOptions {
        cells: CELLS,
        derating: key.derating,
        ..MapOptions::default()
    };
    let map = reach_map(arm, &key.view, &options);
    let cells = map.cells();
    let mut pixels = Vec::with_capacity(cells * cells);
    for image_row in 0..cells {
        let row = cells - 1 - image_row;
        for column in 0..cells {
            pixels.push(match map.torque_use(column, row) {
                Some(share) => torque_colour(share).gamma_multiply(SHADE_ALPHA),
                None => Color32::TRANSPARENT,
            });
        }
    }
    (map, ColorImage::new([cells, cells], pixels))
}

/// The viridis colour map sampled at nine even stops (matplotlib's `viridis`, van der Walt and
/// Smith 2015, chosen because it stays ordered in lightness for the common kinds of colour
/// blindness and in grey; stop values from memory).
const VIRIDIS: [[u8; 3]; 9] = [
    [68, 1, 84],
    [71, 45, 123],
    [59, 82, 139],
    [44, 114, 142],
    [33, 145, 140],
    [40, 174, 128],
    [94, 201, 98],
    [173, 220, 48],
    [253, 231, 37],
];

/// The ramp colour of a torque use (share of rating): 0 at the dark end, [`RAMP_TOP`] and
/// above at the light end, linear between the stops.
pub fn torque_colour(share: f64) -> Color32 {
    let t = if share.is_finite() {
        (share / RAMP_TOP).clamp(0.0, 1.0)
    } else {
        1.0
    };
    let position = t * (VIRIDIS.len() - 1) as f64;
    let low = (position.floor() as usize).min(VIRIDIS.len() - 2);
    let fraction = position - low as f64;
    let mix =
        |a: u8, b: u8| (f64::from(a) + (f64::from(b) - f64::from(a)) * fraction).round() as u8;
    let [a, b] = [VIRIDIS[low], VIRIDIS[low + 1]];
    Color32::from_rgb(mix(a[0], b[0]), mix(a[1], b[1]), mix(a[2], b[2]))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_ramp_runs_dark_to_light_and_clamps() {
        assert_eq!(torque_colour(0.0), Color32::from_rgb(68, 1, 84));
        assert_eq!(torque_colour(RAMP_TOP), Color32::from_rgb(253, 231, 37));
        assert_eq!(torque_colour(9.0), torque_colour(RAMP_TOP));
        assert_eq!(torque_colour(f64::INFINITY), torque_colour(RAMP_TOP));
        // Halfway is the middle stop.
        assert_eq!(
            torque_colour(RAMP_TOP / 2.0),
            Color32::from_rgb(33, 145, 140)
        );
        // Lightness (sum of channels as a rough measure) never falls along the ramp.
        let mut last = 0u32;
        for step in 0..=60 {
            let colour = torque_colour(RAMP_TOP * f64::from(step) / 60.0);
            let light = u32::from(colour.r()) + u32::from(colour.g()) + u32::from(colour.b());
            assert!(light + 2 >= last, "step {step}");
            last = light;
        }
    }
}
