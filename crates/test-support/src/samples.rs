//! Where the bundled sample scenes are (`sample-scenes/*.armwright.json`).

use std::path::PathBuf;

/// The sample-scenes folder.
pub fn samples_dir() -> PathBuf {
    crate::workspace_root().join("sample-scenes")
}

/// The path of the sample scene called `name` (without its `.armwright.json` ending:
/// `"pen-plotter"`, `"spacer-stacker"`, `"peg-sorter"`).
pub fn sample_scene(name: &str) -> PathBuf {
    samples_dir().join(format!("{name}.armwright.json"))
}

/// Every bundled sample scene, in name order (found by listing the folder, so a new sample is
/// picked up without editing a list).
pub fn sample_scenes() -> Vec<PathBuf> {
    let mut scenes: Vec<PathBuf> = std::fs::read_dir(samples_dir())
        .expect("the sample-scenes folder")
        .map(|entry| entry.expect("a folder entry").path())
        .filter(|path| path.to_string_lossy().ends_with(".armwright.json"))
        .collect();
    scenes.sort();
    assert!(
        !scenes.is_empty(),
        "no samples in {}",
        samples_dir().display()
    );
    scenes
}
