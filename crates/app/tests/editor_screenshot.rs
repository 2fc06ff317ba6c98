//! Starts the real `armwright` binary on a sample scene under a virtual X screen, takes a PNG of
//! the screen and checks that it is not blank. The PNG stays under `target/` for a person to
//! look at. Skips with a notice when `xvfb-run` or ImageMagick is absent, or fails
//! under `ARMWRIGHT_STRICT=1` (`armwright_test_support::outside_tool`).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

use armwright_test_support::outside_tool;

use std::path::{Path, PathBuf};
use std::process::Command;

fn on_path(tool: &str) -> bool {
    std::env::var_os("PATH")
        .is_some_and(|paths| std::env::split_paths(&paths).any(|dir| dir.join(tool).is_file()))
}

fn sample_scene_file() -> Option<PathBuf> {
    let path = armwright_test_support::samples::sample_scene("pen-plotter");
    path.is_file().then_some(path)
}

#[test]
fn the_editor_window_is_not_blank_under_a_virtual_screen() {
    let missing: Vec<&str> = ["xvfb-run", "import", "identify"]
        .into_iter()
        .filter(|tool| !on_path(tool))
        .collect();
    if !missing.is_empty() {
        let why = format!(
            "{} not found (Debian: xvfb xauth libxcursor1 libxi6 libxkbcommon-x11-0 libgl1-mesa-dri imagemagick)",
            missing.join(", ")
        );
        outside_tool::cannot_run("the editor screenshot", &why);
        return;
    }
    let out_dir = Path::new(env!("CARGO_TARGET_TMPDIR"));
    let png = out_dir.join("editor-screenshot.png");
    let _ = std::fs::remove_file(&png);
    let state_dir = out_dir.join("editor-screenshot-state");
    let _ = std::fs::remove_dir_all(&state_dir);
    let mut program = vec![env!("CARGO_BIN_EXE_armwright").to_string()];
    if let Some(scene) = sample_scene_file() {
        program.push("edit".into());
        program.push(scene.display().to_string());
    }
    let script = format!(
        "\"$@\" >'{log}' 2>&1 & pid=$!; sleep 8; import -window root '{png}'; kill $pid 2>/dev/null; sleep 1; kill -9 $pid 2>/dev/null; true",
        log = out_dir.join("editor-screenshot.log").display(),
        png = png.display(),
    );
    let status = Command::new("xvfb-run")
        .args([
            "-a",
            "-s",
            "-screen 0 1600x1000x24",
            "bash",
            "-c",
            &script,
            "_",
        ])
        .args(&program)
        .env("XDG_STATE_HOME", &state_dir)
        .status()
        .expect("xvfb-run runs");
    assert!(status.success(), "xvfb-run failed: {status}");
    assert!(png.is_file(), "no screenshot at {}", png.display());
    let colours = Command::new("identify")
        .args(["-format", "%k"])
        .arg(&png)
        .output()
        .expect("identify runs");
    let colours: u64 = String::from_utf8_lossy(&colours.stdout)
        .trim()
        .parse()
        .unwrap_or(0);
    // A blank or single-colour screen has a handful of colours; the editor's text, grid,
    // arm and buttons give hundreds (anti-aliasing adds more).
    assert!(
        colours > 100,
        "the screenshot at {} looks blank: {colours} colours",
        png.display()
    );
    eprintln!("screenshot: {} ({colours} colours)", png.display());
}
