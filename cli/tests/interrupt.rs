//! A run stopped by SIGTERM (what batch schedulers send before a time limit)
//! without checkpoints writes the frames recorded so far, marks them partial
//! and exits with 3.

use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

#[test]
fn sigterm_writes_partial_results_and_exits_3() {
    let dir = std::env::temp_dir().join(format!("turbid-interrupt-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let repo = Path::new(env!("CARGO_MANIFEST_DIR")).parent().unwrap();
    // The demo scenario with many more parcels: long enough to be interrupted.
    let base = std::fs::read_to_string(repo.join("scenarios/glass-beads-column.yaml")).unwrap();
    let scenario = dir.join("long.yaml");
    std::fs::write(&scenario, base.replace("parcels: 20000", "parcels: 400000")).unwrap();
    let out = dir.join("long.h5");
    let child = Command::new(env!("CARGO_BIN_EXE_turbid"))
        .args([
            "run",
            scenario.to_str().unwrap(),
            "-o",
            out.to_str().unwrap(),
            "--progress",
            "none",
            // No checkpoints: the plain interrupt (with one: exit 5, see checkpoint.rs).
            "--checkpoint-every",
            "0",
        ])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    // Let it start and record a few frames, then ask it to stop.
    std::thread::sleep(Duration::from_secs(4));
    let status = Command::new("kill")
        .args(["-TERM", &child.id().to_string()])
        .status()
        .unwrap();
    assert!(status.success());
    let started = Instant::now();
    let output = child.wait_with_output().unwrap();
    assert!(
        started.elapsed() < Duration::from_secs(120),
        "took too long to stop"
    );
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(3), "stderr: {stderr}");
    assert!(out.exists(), "no result file after interrupt");
    let csv = std::fs::read_to_string(dir.join("long.settling.csv")).unwrap();
    assert!(csv.contains("run_status: partial"), "{csv}");
    let rows = csv.lines().filter(|l| !l.starts_with('#')).count();
    assert!(
        rows >= 2,
        "expected the header and at least the initial record:\n{csv}"
    );
    // No temporary files left behind.
    for entry in std::fs::read_dir(&dir).unwrap() {
        let name = entry.unwrap().file_name().into_string().unwrap();
        assert!(!name.contains(".tmp-"), "left {name}");
    }
    std::fs::remove_dir_all(&dir).ok();
}
