//! The `turbid` binary as a user meets it: exit codes, messages, no panics.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn turbid(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_turbid"))
        .args(args)
        .output()
        .expect("run turbid")
}

fn repo() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .unwrap()
        .to_path_buf()
}

fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

#[test]
fn check_prints_a_summary_for_every_example() {
    for entry in std::fs::read_dir(repo().join("scenarios")).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_none_or(|x| x != "yaml") {
            continue;
        }
        let out = turbid(&["check", path.to_str().unwrap()]);
        let stdout = text(&out.stdout);
        assert!(
            out.status.success(),
            "{}: {}",
            path.display(),
            text(&out.stderr)
        );
        for label in [
            "valid scenario",
            "density",
            "viscosity",
            "v_t [mm/s]",
            "Re_t [-]",
            "τ_p [ms]",
            "n [-]",
            "v_h(φ0) [mm/s]",
            "Time step",
        ] {
            assert!(
                stdout.contains(label),
                "{}: no `{label}` in\n{stdout}",
                path.display()
            );
        }
    }
}

#[test]
fn invalid_input_exits_2_with_location_and_hint() {
    let dir = std::env::temp_dir().join(format!("turbid-cli-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let base = std::fs::read_to_string(repo().join("scenarios/glass-beads-column.yaml")).unwrap();
    let cases = [
        (
            "typo.yaml",
            base.replace("height: \"1.0 m\"", "heigth: \"1.0 m\""),
            "did you mean `height`?",
        ),
        (
            "type.yaml",
            base.replace("parcels: 20000", "parcels: lots"),
            "whole number",
        ),
        (
            "negative.yaml",
            base.replace("\"98 µm\"", "\"-98 µm\""),
            "must be positive",
        ),
        (
            "packing.yaml",
            base.replace("\"10 vol%\"", "\"70 vol%\""),
            "maximum packing",
        ),
    ];
    for (name, body, expect) in cases {
        let path = dir.join(name);
        std::fs::write(&path, body).unwrap();
        let out = turbid(&["check", path.to_str().unwrap()]);
        let stderr = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{name}: {stderr}");
        assert!(stderr.contains(expect), "{name}: {stderr}");
        assert!(
            stderr.contains(&format!("{}:", path.display())),
            "{name}: no file:line in {stderr}"
        );
        assert!(
            stderr.contains("hint:") || expect == "must be positive",
            "{name}: {stderr}"
        );
        assert!(
            !stderr.contains("panicked") && !stderr.contains("internal error"),
            "{stderr}"
        );
    }
    let out = turbid(&["check", dir.join("missing.yaml").to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("cannot read the scenario file"));
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn schema_prints_json() {
    let out = turbid(&["schema"]);
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("valid JSON");
    assert_eq!(v["$schema"], "http://json-schema.org/draft-07/schema#");
    assert!(v["properties"]["solids"].is_object());
}

#[test]
fn unknown_command_exits_2() {
    assert_eq!(turbid(&["settle-everything"]).status.code(), Some(2));
}

#[test]
fn run_refuses_what_the_particle_engine_does_not_model() {
    // Bed compression with several size classes is not modelled by the
    // particle engine: refused with a reason and exit 2, never silently ignored.
    let dir = std::env::temp_dir().join(format!("turbid-cli-unsupported-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let base = std::fs::read_to_string(repo().join("scenarios/glass-beads-column.yaml")).unwrap();
    let body = base
        .replace(
            "  max_packing: 0.62",
            "  max_packing: 0.62\n  compression:\n    power_law: { yield_stress: \"1 Pa\", gel_point: 0.2, exponent: 6 }",
        )
        .replace(
            "size: { single: \"98 µm\" }",
            "size: { log_normal: { median: \"98 µm\", geometric_sd: 1.3 } }\n    size_classes: 3",
        );
    assert_ne!(body, base);
    let path = dir.join("compression.yaml");
    std::fs::write(&path, body).unwrap();
    let out = turbid(&[
        "run",
        path.to_str().unwrap(),
        "-o",
        dir.join("x.h5").to_str().unwrap(),
    ]);
    let stderr = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("compression"), "{stderr}");
    assert!(stderr.contains("one size class"), "{stderr}");
    assert!(!dir.join("x.h5").exists());
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn continuum_engine_runs_the_demo_column() {
    // Same scenario, the 1-D engine: a complete record and the settling curve.
    let dir = std::env::temp_dir().join(format!("turbid-cli-continuum-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let base = std::fs::read_to_string(repo().join("scenarios/glass-beads-column.yaml")).unwrap();
    let body = base.replace("  seed: 7", "  seed: 7\n  engine: continuum");
    assert_ne!(body, base);
    let path = dir.join("continuum.yaml");
    std::fs::write(&path, body).unwrap();
    let out = dir.join("c.h5");
    let run = turbid(&[
        "run",
        path.to_str().unwrap(),
        "-o",
        out.to_str().unwrap(),
        "--progress",
        "none",
    ]);
    assert!(run.status.success(), "{}", text(&run.stderr));
    assert!(text(&run.stderr).contains("continuum engine"));
    let csv = std::fs::read_to_string(dir.join("c.settling.csv")).unwrap();
    assert!(csv.contains("run_status: complete"));
    // 121 records (every 5 s for 10 min) after the header line.
    assert_eq!(csv.lines().filter(|l| !l.starts_with('#')).count(), 122);
    std::fs::remove_dir_all(&dir).ok();
}
