//! `armwright protractor`: the printable protractor, and the copy committed under `assets/`
//! kept in step with what the command draws.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use common::{armwright, scratch_dir};

fn committed() -> String {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../assets/protractor.svg");
    std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

#[test]
fn the_committed_protractor_is_what_the_command_draws() {
    let (code, stdout, stderr) = armwright(&["protractor"]);
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(
        stdout,
        committed(),
        "assets/protractor.svg is stale: run `armwright protractor --out assets/protractor.svg`"
    );
}

#[test]
fn the_page_is_drawn_in_millimetres_at_a4() {
    let svg = committed();
    assert!(svg.contains("width=\"210mm\" height=\"297mm\" viewBox=\"0 0 210 297\""));
    // The scale-check bar: 100 units of the view box, which is 100 mm at 100 %.
    assert!(svg.contains("width=\"100\" height=\"2\""), "the 100 mm bar");
}

#[test]
fn out_writes_the_same_page_to_a_file() {
    let out = scratch_dir("protractor").join("dial.svg");
    let out_text = out.to_string_lossy().into_owned();
    let (code, stdout, stderr) = armwright(&["protractor", "--out", &out_text]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("100 %"), "{stdout}");
    assert_eq!(std::fs::read_to_string(&out).unwrap(), committed());
}
