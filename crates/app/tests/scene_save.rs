//! Saving: atomic (temporary file beside, flushed, renamed), and a failed save leaves the
//! existing file and its directory as they were.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use armwright::scene::{SceneError, load, load_bytes, save, to_json};
use common::{articulated5, bytes, scara, scratch_dir};

fn entries(dir: &std::path::Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|entry| entry.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    names
}

#[test]
fn a_saved_scene_loads_back_equal_and_leaves_no_temporary_file() {
    let dir = scratch_dir("save-load");
    let path = dir.join("arm.armwright.json");
    for document in [articulated5(), scara()] {
        let scene = load_bytes(&bytes(&document)).unwrap();
        save(&scene, &path).unwrap();
        assert_eq!(load(&path).unwrap(), scene);
        assert_eq!(entries(&dir), ["arm.armwright.json"]);
    }
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn the_saved_text_starts_with_format_and_version() {
    let scene = load_bytes(&bytes(&scara())).unwrap();
    let text = to_json(&scene);
    let start = "{\n  \"format\": \"armwright-scene\",\n  \"version\": 1,";
    assert!(text.starts_with(start), "{text}");
    assert!(text.ends_with("}\n"));
    assert!(
        text.contains("\"min_mm\": -40.0"),
        "prismatic limits are written in mm"
    );
}

#[test]
fn saving_over_a_directory_fails_and_changes_nothing() {
    let dir = scratch_dir("save-over-dir");
    let target = dir.join("taken.armwright.json");
    std::fs::create_dir(&target).unwrap();
    std::fs::write(target.join("inside.txt"), b"keep me").unwrap();
    let scene = load_bytes(&bytes(&articulated5())).unwrap();
    let error = save(&scene, &target).unwrap_err();
    assert!(matches!(error, SceneError::Write { .. }));
    assert!(target.is_dir());
    assert_eq!(
        std::fs::read(target.join("inside.txt")).unwrap(),
        b"keep me"
    );
    assert_eq!(
        entries(&dir),
        ["taken.armwright.json"],
        "no temporary file is left"
    );
    std::fs::remove_dir_all(dir).unwrap();
}

#[test]
fn saving_into_a_missing_directory_fails() {
    let dir = scratch_dir("save-missing");
    let scene = load_bytes(&bytes(&articulated5())).unwrap();
    let error = save(&scene, &dir.join("nowhere/x.armwright.json")).unwrap_err();
    assert!(matches!(error, SceneError::Write { .. }), "{error:?}");
    assert!(entries(&dir).is_empty());
    std::fs::remove_dir_all(dir).unwrap();
}

#[cfg(unix)]
#[test]
fn saving_into_a_read_only_directory_keeps_the_existing_file() {
    use std::os::unix::fs::PermissionsExt;
    let dir = scratch_dir("save-read-only");
    let path = dir.join("kept.armwright.json");
    let old = load_bytes(&bytes(&articulated5())).unwrap();
    save(&old, &path).unwrap();
    let before = std::fs::read(&path).unwrap();
    let mut new = old.clone();
    new.description = "changed".into();
    std::fs::set_permissions(&dir, std::fs::Permissions::from_mode(0o555)).unwrap();
    let result = save(&new, &path);
    std::fs::set_permissions(&dir, std::fs::Permissions::from_mode(0o755)).unwrap();
    match result {
        Err(SceneError::Write { .. }) => {
            assert_eq!(std::fs::read(&path).unwrap(), before);
            assert_eq!(entries(&dir), ["kept.armwright.json"]);
        }
        // A superuser may write into a read-only directory; then the save must be whole.
        Ok(()) => {
            println!("note: running with rights that ignore directory permissions");
            assert_eq!(load(&path).unwrap(), new);
        }
        Err(other) => panic!("unexpected error {other:?}"),
    }
    std::fs::remove_dir_all(dir).unwrap();
}

#[cfg(unix)]
#[test]
fn saving_over_a_file_keeps_its_permissions() {
    use std::os::unix::fs::PermissionsExt;
    let dir = scratch_dir("save-mode");
    let path = dir.join("private.armwright.json");
    let scene = load_bytes(&bytes(&articulated5())).unwrap();
    save(&scene, &path).unwrap();
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o640)).unwrap();
    save(&scene, &path).unwrap();
    let mode = std::fs::metadata(&path).unwrap().permissions().mode() & 0o777;
    assert_eq!(mode, 0o640, "{mode:o}");
    std::fs::remove_dir_all(dir).unwrap();
}

#[cfg(unix)]
#[test]
fn saving_through_a_symbolic_link_writes_its_target_and_keeps_the_link() {
    let dir = scratch_dir("save-link");
    std::fs::create_dir(dir.join("real")).unwrap();
    let target = dir.join("real").join("arm.armwright.json");
    std::fs::write(&target, "old").unwrap();
    let link = dir.join("arm.armwright.json");
    // A relative link, resolved from the link's own folder.
    std::os::unix::fs::symlink("real/arm.armwright.json", &link).unwrap();
    let scene = load_bytes(&bytes(&scara())).unwrap();
    save(&scene, &link).unwrap();
    assert!(
        std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink(),
        "the link stays a link"
    );
    assert_eq!(load(&target).unwrap(), scene);
    assert_eq!(entries(&dir.join("real")), ["arm.armwright.json"]);
    assert_eq!(entries(&dir), ["arm.armwright.json", "real"]);
    std::fs::remove_dir_all(dir).unwrap();
}
