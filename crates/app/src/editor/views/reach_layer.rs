//! The reach envelope and torque-use map behind each view, computed off the UI thread.
//!
//! Each view has two maps: one at the tool angle a drag holds (what dragging can reach now, and
//! the torque it takes there: the shading), and one over any tool angle (its boundary only, drawn
//! fainter: what changing the angle would open up). A map depends on the arm, the torque
//! derating, the view's plane (the top view's height, the side view's yaw) and, for the first,
//! the tool angle. When they change, a worker thread runs `reach_map` and turns the cells into a
//! picture; the UI thread only uploads that picture as a texture and draws one quad and the
//! boundary polylines. At most one job runs per map: a change while one runs is picked up when
//! it ends.

use std::sync::mpsc::{Receiver, Sender, channel};

use armwright_kinematics::{Arm, MapOptions, MapView, ReachMap, reach_map};
use egui::{Color32, ColorImage, TextureHandle, TextureOptions};

use super::ViewKind;
use crate::editor::state::EditorState;

/// Cells along each side of a map: 160 × 160 cells keep a map near 2 mm on a 300 mm arm and
/// take tens of ms on a worker.
const CELLS: usize = 160;

/// Opacity of the shading over the grid.
const SHADE_ALPHA: f32 = 0.55;

/// What a map was made for; a new map is needed when this changes.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MapKey {
    /// The plane.
    pub view: MapView,
    /// The derating, as a share of stall torque.
    pub derating: f64,
    /// The tool angle held fixed (rad, to 0.5°), or `None` for any tool angle.
    pub tool_angle: Option<f64>,
}

/// Steps the keys round the plane and the tool angle to, so that tiny changes reuse a map: the
/// top view's height to 1 mm, the side view's yaw and the tool angle to 0.5°.
const HEIGHT_STEP: f64 = 1e-3;
const ANGLE_STEP_DEG: f64 = 0.5;

fn round_angle(angle: f64) -> f64 {
    let step = ANGLE_STEP_DEG.to_radians();
    (angle / step).round() * step
}

impl MapKey {
    /// The key of the map a view shades now: its plane (the top view's at the tool point's
    /// height, the side view's at its yaw) at the tool angle a drag holds.
    pub fn for_view(state: &EditorState, kind: ViewKind) -> Option<MapKey> {
        let mut key = MapKey::any_angle(state, kind)?;
        key.tool_angle = Some(round_angle(state.tool_angle));
        Some(key)
    }

    /// The key of a view's map over any tool angle, on the same plane as [`MapKey::for_view`].
    pub fn any_angle(state: &EditorState, kind: ViewKind) -> Option<MapKey> {
        let derating = state.scene.timing.torque_derating_pct / 100.0;
        let view = match kind {
            ViewKind::Top => {
                let height = state.tool_point()?.z;
                MapView::Top {
                    height: (height / HEIGHT_STEP).round() * HEIGHT_STEP,
                }
            }
            ViewKind::Side => MapView::Side {
                yaw: round_angle(state.side_view_yaw()),
            },
        };
        Some(MapKey {
            view,
            derating,
            tool_angle: None,
        })
    }
}

/// A finished map and its picture.
pub struct MapLayer {
    /// What it was made for.
    pub key: MapKey,
    /// The map (m, shares of rated torque).
    pub map: ReachMap,
    /// How its torque use is coloured.
    pub ramp: TorqueRamp,
    /// The shading, one texel per cell, top row first.
    pub texture: TextureHandle,
}

struct Finished {
    slot: usize,
    key: MapKey,
    map: ReachMap,
    ramp: TorqueRamp,
    image: ColorImage,
}

/// Slots: each view's map at the held tool angle, then each view's map over any tool angle.
const SLOTS: usize = 4;

/// Both views' maps and the worker that makes them.
pub struct ReachLayers {
    layers: [Option<MapLayer>; SLOTS],
    running: [Option<MapKey>; SLOTS],
    sender: Sender<Finished>,
    receiver: Receiver<Finished>,
}

impl Default for ReachLayers {
    fn default() -> ReachLayers {
        let (sender, receiver) = channel();
        ReachLayers {
            layers: [None, None, None, None],
            running: [None; SLOTS],
            sender,
            receiver,
        }
    }
}

fn slot(kind: ViewKind, any_angle: bool) -> usize {
    let view = match kind {
        ViewKind::Top => 0,
        ViewKind::Side => 1,
    };
    view + if any_angle { 2 } else { 0 }
}

impl ReachLayers {
    /// Takes finished maps, and starts a job for each view whose map is out of date and has none
    /// running. Cheap: no map work happens here.
    pub fn update(&mut self, ctx: &egui::Context, state: &EditorState) {
        for finished in self.receiver.try_iter().collect::<Vec<_>>() {
            let index = finished.slot;
            self.running[index] = None;
            // Linear filtering: the cells' staircase at the envelope's edge blends into a soft
            // edge under the traced boundary line instead of showing its steps.
            let texture = ctx.load_texture(
                format!("armwright reach map {index}"),
                finished.image,
                TextureOptions::LINEAR,
            );
            self.layers[index] = Some(MapLayer {
                key: finished.key,
                map: finished.map,
                ramp: finished.ramp,
                texture,
            });
        }
        let Some(arm) = state.arm() else {
            return;
        };
        // The shaded maps first: they are what a drag can reach.
        for (kind, any_angle) in [
            (ViewKind::Top, false),
            (ViewKind::Side, false),
            (ViewKind::Top, true),
            (ViewKind::Side, true),
        ] {
            let index = slot(kind, any_angle);
            let wanted = if any_angle {
                MapKey::any_angle(state, kind)
            } else {
                MapKey::for_view(state, kind)
            };
            let Some(wanted) = wanted else {
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
                    let (map, ramp, image) = make_map(&arm, wanted);
                    let _ = sender.send(Finished {
                        slot: index,
                        key: wanted,
                        map,
                        ramp,
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

    /// The newest finished map of a view at the tool angle a drag holds (the shaded one).
    pub fn layer(&self, kind: ViewKind) -> Option<&MapLayer> {
        self.layers[slot(kind, false)].as_ref()
    }

    /// The newest finished map of a view over any tool angle (its boundary is drawn fainter).
    pub fn any_angle_layer(&self, kind: ViewKind) -> Option<&MapLayer> {
        self.layers[slot(kind, true)].as_ref()
    }

    /// Whether a map job is running.
    pub fn busy(&self) -> bool {
        self.running.iter().any(Option::is_some)
    }
}

fn make_map(arm: &Arm, key: MapKey) -> (ReachMap, TorqueRamp, ColorImage) {
    let options = MapOptions {
        cells: CELLS,
        derating: key.derating,
        tool_angle: key.tool_angle,
        ..MapOptions::default()
    };
    let map = reach_map(arm, &key.view, &options);
    let cells = map.cells();
    let ramp = TorqueRamp::spanning(&map);
    let mut pixels = Vec::with_capacity(cells * cells);
    for image_row in 0..cells {
        let row = cells - 1 - image_row;
        for column in 0..cells {
            pixels.push(match map.torque_use(column, row) {
                Some(share) => ramp.colour(share).gamma_multiply(SHADE_ALPHA),
                None => Color32::TRANSPARENT,
            });
        }
    }
    (map, ramp, ColorImage::new([cells, cells], pixels))
}

/// A finished map for `key`, made on the calling thread (for tests of the drawing).
#[cfg(test)]
pub(super) fn layer_now(ctx: &egui::Context, arm: &Arm, key: MapKey) -> MapLayer {
    let (map, ramp, image) = make_map(arm, key);
    MapLayer {
        key,
        map,
        ramp,
        texture: ctx.load_texture("test reach map", image, TextureOptions::NEAREST),
    }
}

/// How a map's torque use is coloured: the ramp spans the range the map holds, rounded out to
/// 5 % and at least 10 % wide, up to 100 % of the derated rating; any cell over 100 % takes
/// [`OVER_RATING`] instead, so where the arm cannot hold its load stands out.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TorqueRamp {
    /// Torque use at the dark end of the ramp, as a share of the rating.
    pub low: f64,
    /// Torque use at the light end, as a share of the rating (at most 1).
    pub high: f64,
    /// The least and greatest torque use of the map's reachable cells (shares), if any.
    pub range: Option<(f64, f64)>,
}

/// Rounding of the ramp's ends, as a share of the rating (5 %).
const RAMP_ROUNDING: f64 = 0.05;
/// Narrowest ramp, as a share of the rating (10 %).
const RAMP_NARROWEST: f64 = 0.1;

/// Colour of cells over the rating (Okabe–Ito vermillion, off the viridis ramp).
pub const OVER_RATING: Color32 = Color32::from_rgb(213, 94, 0);

impl TorqueRamp {
    /// The ramp for the torque uses of `map`'s reachable cells.
    fn spanning(map: &ReachMap) -> TorqueRamp {
        let n = map.cells();
        let values = (0..n)
            .flat_map(|row| (0..n).map(move |column| (column, row)))
            .filter_map(|(column, row)| map.torque_use(column, row))
            .filter(|value| value.is_finite());
        TorqueRamp::over(values)
    }

    /// The ramp for a set of torque uses (shares of the rating).
    pub fn over(values: impl Iterator<Item = f64>) -> TorqueRamp {
        let range = values.fold(None, |range: Option<(f64, f64)>, value| match range {
            None => Some((value, value)),
            Some((low, high)) => Some((low.min(value), high.max(value))),
        });
        let (low, high) = match range {
            None => (0.0, 1.0),
            Some((low, high)) => {
                let low = ((low.max(0.0) / RAMP_ROUNDING).floor() * RAMP_ROUNDING).min(1.0);
                let high = ((high / RAMP_ROUNDING).ceil() * RAMP_ROUNDING).min(1.0);
                if high - low >= RAMP_NARROWEST {
                    (low, high)
                } else if low + RAMP_NARROWEST <= 1.0 {
                    (low, low + RAMP_NARROWEST)
                } else {
                    (1.0 - RAMP_NARROWEST, 1.0)
                }
            }
        };
        TorqueRamp { low, high, range }
    }

    /// Whether any reachable cell is over the rating.
    pub fn any_over(&self) -> bool {
        self.range.is_some_and(|(_, high)| high > 1.0)
    }

    /// The colour of a torque use (share of rating): [`OVER_RATING`] above 1, otherwise the
    /// viridis ramp from `low` (dark) to `high` (light), clamped at its ends.
    pub fn colour(&self, share: f64) -> Color32 {
        if !share.is_finite() || share > 1.0 {
            return OVER_RATING;
        }
        viridis((share - self.low) / (self.high - self.low))
    }
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

/// The viridis colour at `t` from 0 (dark) to 1 (light), clamped, linear between the stops.
pub fn viridis(t: f64) -> Color32 {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
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
        assert_eq!(viridis(0.0), Color32::from_rgb(68, 1, 84));
        assert_eq!(viridis(1.0), Color32::from_rgb(253, 231, 37));
        assert_eq!(viridis(9.0), viridis(1.0));
        assert_eq!(viridis(f64::NAN), viridis(1.0));
        // Halfway is the middle stop.
        assert_eq!(viridis(0.5), Color32::from_rgb(33, 145, 140));
        // Lightness (sum of channels as a rough measure) never falls along the ramp.
        let mut last = 0u32;
        for step in 0..=60 {
            let colour = viridis(f64::from(step) / 60.0);
            let light = u32::from(colour.r()) + u32::from(colour.g()) + u32::from(colour.b());
            assert!(light + 2 >= last, "step {step}");
            last = light;
        }
    }

    #[test]
    fn the_torque_ramp_spans_the_values_a_map_holds() {
        // Values from 12 % to 37 %: the ramp runs 10 % to 40 %, both ends used.
        let ramp = TorqueRamp::over([0.12, 0.2, 0.37].into_iter());
        assert!((ramp.low - 0.10).abs() < 1e-9 && (ramp.high - 0.40).abs() < 1e-9);
        assert_eq!(ramp.colour(0.12), viridis((0.12 - 0.1) / 0.3));
        assert_eq!(ramp.colour(0.40), viridis(1.0));
        assert!(!ramp.any_over());
        // A narrow spread still gets 10 % of ramp; over the rating is off the ramp.
        let ramp = TorqueRamp::over([0.51, 0.52, 1.3].into_iter());
        assert!((ramp.low - 0.5).abs() < 1e-9 && (ramp.high - 1.0).abs() < 1e-9);
        assert!(ramp.any_over());
        assert_eq!(ramp.colour(1.3), OVER_RATING);
        assert_eq!(ramp.colour(1.0), viridis(1.0));
        let ramp = TorqueRamp::over([0.97].into_iter());
        assert!((ramp.low - 0.9).abs() < 1e-9 && (ramp.high - 1.0).abs() < 1e-9);
        // No values: the whole rating.
        let ramp = TorqueRamp::over(std::iter::empty());
        assert_eq!((ramp.low, ramp.high, ramp.range), (0.0, 1.0, None));
    }
}
