//! The session's side of the connected device: which device, the caution, parking after a
//! stream, and the poses the device reports (the arm it moves, the input arm it reads).

use crate::scene::Device;

/// What the editor keeps of the device link for the session (not saved with the scene).
#[derive(Debug, Clone, PartialEq)]
pub struct DeviceSide {
    /// The device the link panel connects to.
    pub link_device: Device,
    /// Whether the streaming caution was acknowledged in this session.
    pub caution_acknowledged: bool,
    /// Whether a stream ends by moving to the rest pose and holding there, as `stream --park`
    /// does (the Link tab's checkbox; kept while the editor runs, not saved).
    pub park_after_stream: bool,
    /// The joint positions of the arm as the connected simulated device moves it (from its
    /// servo model), rad (revolute) or m (prismatic); `None` when no such device is connected.
    pub device_pose: Option<Vec<f64>>,
    /// The input arm's joint positions from the connected device's analog readings through
    /// the scene's `inputs`, rad or m (`editor/capture.rs`); `None` without readings or inputs.
    pub input_pose: Option<Vec<f64>>,
}

impl Default for DeviceSide {
    fn default() -> DeviceSide {
        DeviceSide {
            link_device: Device::Simulated,
            caution_acknowledged: false,
            park_after_stream: false,
            device_pose: None,
            input_pose: None,
        }
    }
}

impl DeviceSide {
    /// What the session keeps when another scene opens: everything but the input arm's pose,
    /// which the new scene's `inputs` give anew.
    pub(crate) fn for_another_scene(self) -> DeviceSide {
        DeviceSide {
            input_pose: None,
            ..self
        }
    }
}
