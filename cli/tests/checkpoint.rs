//! `turbid run` stopped by a real SIGTERM (what Slurm sends before a time
//! limit) writes a checkpoint and exits 5; `--resume` continues, and the
//! result file equals that of an uninterrupted run bit for bit (every
//! variable read back with the independent `netcdf-reader` crate; only the
//! `history` attribute, which holds the creation time, may differ). The
//! reference is the uninterrupted run itself: a restart must not change a
//! single bit. Checkpoints of another scenario, or damaged ones, are refused
//! with exit 2.

use netcdf_reader::{NcFile, NcType};
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

/// The shared four-class column (invented test case), with some of its
/// settings changed; each `(from, to)` must be in the file.
fn resized(changes: &[(&str, &str)]) -> String {
    let mut text = include_str!("../../tests/fixtures/four-class-column.yaml").to_string();
    for (from, to) in changes {
        assert!(text.contains(from), "fixture: `{from}` not found");
        text = text.replacen(from, to, 1);
    }
    text
}

/// A small thickener that starts full (invented test case): parcels leave
/// through both outlets and new ones are fed, so the feed carry, the next id
/// and the table order after despawns are all in the checkpoint.
const TANK: &str = include_str!("../../tests/fixtures/checkpoint-tank.yaml");

struct Scratch(PathBuf);

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

fn scratch(name: &str) -> Scratch {
    let dir = std::env::temp_dir().join(format!("turbid-ckpt-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(dir.join("whole")).unwrap();
    std::fs::create_dir_all(dir.join("parts")).unwrap();
    Scratch(dir)
}

fn turbid(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_turbid"))
        .args(args)
        .output()
        .expect("run turbid")
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

/// Start a run with frequent checkpoints, wait until it has written one
/// (so it has advanced some steps), SIGTERM it, and return its output.
fn run_and_terminate(scenario: &Path, out: &Path) -> Output {
    let ckpt = out.with_extension("checkpoint");
    let mut child = Command::new(env!("CARGO_BIN_EXE_turbid"))
        .args(["run", s(scenario), "-o", s(out), "--threads", "2"])
        .args(["--progress", "none", "--checkpoint-every", "0.003"])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let started = Instant::now();
    while !ckpt.exists() {
        if let Ok(Some(status)) = child.try_wait() {
            panic!("the run ended ({status}) before it wrote a checkpoint");
        }
        assert!(
            started.elapsed() < Duration::from_secs(60),
            "no checkpoint appeared"
        );
        std::thread::sleep(Duration::from_millis(20));
    }
    let status = Command::new("kill")
        .args(["-TERM", &child.id().to_string()])
        .status()
        .unwrap();
    assert!(status.success());
    child.wait_with_output().unwrap()
}

/// Every variable bit for bit, every global attribute but `history`.
fn assert_same_results(a: &Path, b: &Path) {
    let (f_a, f_b) = (NcFile::open(a).unwrap(), NcFile::open(b).unwrap());
    let attributes = |f: &NcFile| {
        f.global_attributes()
            .unwrap()
            .iter()
            .filter(|a| a.name != "history")
            .map(|a| format!("{a:?}"))
            .collect::<Vec<String>>()
    };
    assert_eq!(attributes(&f_a), attributes(&f_b));
    let variables = f_a.variables().unwrap();
    assert_eq!(
        format!("{variables:?}"),
        format!("{:?}", f_b.variables().unwrap())
    );
    assert!(variables.len() >= 10);
    for v in variables {
        let name = v.name();
        if *v.dtype() == NcType::String {
            assert_eq!(
                f_a.read_variable_as_strings(name).unwrap(),
                f_b.read_variable_as_strings(name).unwrap(),
                "variable {name} differs"
            );
        } else {
            let (x, y) = (
                f_a.read_variable_raw_bytes(name).unwrap(),
                f_b.read_variable_raw_bytes(name).unwrap(),
            );
            assert!(x == y, "variable {name} differs after the restart");
        }
    }
}

/// Uninterrupted run, then the same run stopped by SIGTERM and resumed.
fn stop_and_resume_matches(name: &str, text: &str) {
    let dir = scratch(name);
    let scenario = dir.0.join("scenario.yaml");
    std::fs::write(&scenario, text).unwrap();
    let whole = dir.0.join("whole/run.h5");
    let o = turbid(&["run", s(&scenario), "-o", s(&whole), "--threads", "2"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(!dir.0.join("whole/run.checkpoint").exists());

    let parts = dir.0.join("parts/run.h5");
    let o = run_and_terminate(&scenario, &parts);
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(5), "stderr: {stderr}");
    let ckpt = dir.0.join("parts/run.checkpoint");
    assert!(ckpt.exists());
    let summary = std::fs::read_to_string(dir.0.join("parts/run.summary.json")).unwrap();
    assert!(summary.contains("\"status\": \"partial\""), "{summary}");
    assert!(summary.contains("run.checkpoint"), "{summary}");
    // The partial result file has fewer records than the whole run's.
    let n = |p: &Path| {
        NcFile::open(p)
            .unwrap()
            .read_variable::<f64>("time")
            .unwrap()
            .len()
    };
    assert!(n(&parts) < n(&whole), "the run ended before the signal");

    let o = turbid(&[
        "run",
        s(&scenario),
        "-o",
        s(&parts),
        "--threads",
        "2",
        "--resume",
    ]);
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert!(o.status.success(), "{stderr}");
    assert!(stderr.contains("resumed from"), "{stderr}");
    assert!(!ckpt.exists(), "a finished run leaves no checkpoint");
    assert_same_results(&whole, &parts);
    // The settling curve too (data rows; the header names the file).
    let rows = |p: &Path| {
        std::fs::read_to_string(p)
            .unwrap()
            .lines()
            .filter(|l| !l.starts_with('#'))
            .map(String::from)
            .collect::<Vec<_>>()
    };
    assert_eq!(
        rows(&dir.0.join("whole/run.settling.csv")),
        rows(&dir.0.join("parts/run.settling.csv"))
    );
}

#[test]
fn particle_batch_stopped_by_sigterm_resumes_bit_for_bit() {
    stop_and_resume_matches("batch", &resized(&[("parcels: 3000", "parcels: 8000")]));
}

#[test]
fn particle_thickener_stopped_by_sigterm_resumes_bit_for_bit() {
    // More parcels than the in-process test, so the run lasts long enough to be signalled.
    stop_and_resume_matches("tank", &TANK.replace("parcels: 2000", "parcels: 10000"));
}

#[test]
fn continuum_stopped_by_sigterm_resumes_bit_for_bit() {
    let repo = Path::new(env!("CARGO_MANIFEST_DIR")).parent().unwrap();
    let text = std::fs::read_to_string(repo.join("scenarios/glass-beads-column.yaml"))
        .unwrap()
        .replace("parcels: 20000", "parcels: 20000\n  engine: continuum")
        + "numerics:\n  cells: 900\n";
    stop_and_resume_matches("continuum", &text);
}

#[test]
fn resume_refuses_missing_foreign_and_damaged_checkpoints() {
    let dir = scratch("refuse");
    let scenario = dir.0.join("scenario.yaml");
    let small = resized(&[("parcels: 3000", "parcels: 8000")]);
    std::fs::write(&scenario, &small).unwrap();
    let out = dir.0.join("parts/run.h5");
    let resume = |extra: &[&str]| {
        let mut args = vec!["run", s(&scenario), "-o", s(&out), "--resume"];
        args.extend_from_slice(extra);
        turbid(&args)
    };
    // No checkpoint yet.
    let o = resume(&[]);
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("no checkpoint"), "{stderr}");

    let o = run_and_terminate(&scenario, &out);
    assert_eq!(
        o.status.code(),
        Some(5),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let ckpt = dir.0.join("parts/run.checkpoint");
    let good = std::fs::read(&ckpt).unwrap();

    // The scenario changed since: refused, and it says why.
    std::fs::write(&scenario, small.replace("seed: 17", "seed: 18")).unwrap();
    let o = resume(&[]);
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("another scenario"), "{stderr}");
    std::fs::write(&scenario, &small).unwrap();

    // Truncated, and one flipped byte.
    std::fs::write(&ckpt, &good[..good.len() - 100]).unwrap();
    let o = resume(&[]);
    let stderr = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("damaged"), "{stderr}");
    let mut bad = good.clone();
    let mid = bad.len() / 2;
    bad[mid] ^= 0x01;
    std::fs::write(&ckpt, &bad).unwrap();
    let o = resume(&[]);
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("damaged"));

    // The intact one, named explicitly elsewhere, continues to the end.
    let moved = dir.0.join("elsewhere.ckpt");
    std::fs::write(&moved, &good).unwrap();
    let o = resume(&["--checkpoint", s(&moved)]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(!moved.exists());
}
