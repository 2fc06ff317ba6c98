//! Every subcommand answers `--help` with exit 0, and value names carry their units.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code may stop loudly

mod common;

use common::armwright;

#[test]
fn the_top_level_help_lists_every_subcommand() {
    let (code, stdout, _) = armwright(&["--help"]);
    assert_eq!(code, 0);
    for word in ["check", "pose", "reach", "envelope", "Exit status"] {
        assert!(stdout.contains(word), "{word} missing from:\n{stdout}");
    }
}

#[test]
fn each_subcommand_has_help_with_units_in_its_value_names() {
    let expectations: [(&str, &[&str]); 4] = [
        ("check", &["--json", "FILE", "product of exponentials"]),
        ("pose", &["--joints <DEG_OR_MM,...>", "--json"]),
        (
            "reach",
            &[
                "--to <X_MM,Y_MM,Z_MM[,ANGLE_DEG[,ROLL_DEG]]>",
                "--near <DEG_OR_MM,...>",
            ],
        ),
        (
            "envelope",
            &[
                "--view <VIEW>",
                "--at <MM|DEG>",
                "--cells <N>",
                "--svg <OUT.svg>",
            ],
        ),
    ];
    for (subcommand, needles) in expectations {
        let (code, stdout, _) = armwright(&[subcommand, "--help"]);
        assert_eq!(code, 0, "{subcommand}");
        for needle in needles {
            assert!(
                stdout.contains(needle),
                "{subcommand}: {needle} missing from:\n{stdout}"
            );
        }
    }
}
