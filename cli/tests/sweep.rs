//! `turbid sweep`: expansion into runs, its error messages, and the local
//! pool (end to end, a failed run, a killed and restarted sweep).

mod common;

use common::*;
use std::path::Path;
use std::time::{Duration, Instant};

const GRID: &str = r#"sweep: 1
title: Tiny grid (invented)
base: base.yaml
grid:
  initial.loading: ["5 vol%", "15 vol%"]
  solids.0.size.single: ["80 µm", "98 µm"]
"#;

fn read(p: &Path) -> String {
    std::fs::read_to_string(p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

#[test]
fn expansion_is_numbered_deterministic_and_every_run_stands_alone() {
    let dir = temp_dir("sweep-expand");
    write(&dir.join("base.yaml"), &base(3000));
    write(
        &dir.join("s/grid.yaml"),
        &GRID.replace("base.yaml", "../base.yaml"),
    );
    // From two working directories: the runs do not depend on where it is called from.
    let a = run_in(&dir, &["sweep", "expand", "s/grid.yaml"]);
    assert!(a.status.success(), "{}", text(&a.stderr));
    let runs = dir.join("s/out/grid/runs");
    let first: Vec<String> = (1..=4)
        .map(|i| read(&runs.join(format!("run-000{i}.yaml"))))
        .collect();
    let b = run_in(&dir.join("s"), &["sweep", "expand", "grid.yaml"]);
    assert!(b.status.success(), "{}", text(&b.stderr));
    for (i, t) in first.iter().enumerate() {
        assert_eq!(t, &read(&runs.join(format!("run-000{}.yaml", i + 1))));
    }
    assert!(!runs.join("run-0005.yaml").exists());
    // Grid order: the last parameter varies fastest.
    let expect = [
        ("5 vol%", "80 µm"),
        ("5 vol%", "98 µm"),
        ("15 vol%", "80 µm"),
        ("15 vol%", "98 µm"),
    ];
    for (t, (l, d)) in first.iter().zip(expect) {
        assert!(t.contains(&format!("loading: {l}")), "{t}");
        assert!(t.contains(&format!("single: {d}")), "{t}");
        assert!(
            t.contains("output:\n  file: /"),
            "absolute output path:\n{t}"
        );
    }
    // Each run file is a complete scenario on its own.
    let check = run_in(
        &dir,
        &["check", runs.join("run-0003.yaml").to_str().unwrap()],
    );
    assert!(check.status.success(), "{}", text(&check.stderr));

    // Random samples: same seed, same values; more samples keep the first ones.
    let random = |n: u32| {
        format!(
            "sweep: 1\nbase: base.yaml\noutput_dir: out/r{n}\nrandom:\n  samples: {n}\n  seed: 42\n  parameters:\n    \
             initial.loading: {{ uniform: {{ low: \"5 vol%\", high: \"20 vol%\" }} }}\n    \
             solids.0.size.single: {{ log_normal: {{ median: \"98 µm\", geometric_sd: 1.2 }} }}\n    \
             run.seed: {{ uniform: {{ low: 1, high: 1000 }} }}\n"
        )
    };
    write(&dir.join("r3.yaml"), &random(3));
    write(&dir.join("r5.yaml"), &random(5));
    for f in ["r3.yaml", "r5.yaml"] {
        let o = run_in(&dir, &["sweep", "expand", f]);
        assert!(o.status.success(), "{}", text(&o.stderr));
    }
    let body = |t: &str| t.split_once("\n# Repeat").unwrap().1.to_string();
    for i in 1..=3 {
        let r3 = read(&dir.join(format!("out/r3/runs/run-000{i}.yaml")));
        let r5 = read(&dir.join(format!("out/r5/runs/run-000{i}.yaml")));
        assert_eq!(body(&r3).replace("/r3/", "/r5/"), body(&r5));
        // The unit is kept, and a whole number in the base stays whole.
        let loading = r3.lines().find(|l| l.contains("loading:")).unwrap();
        assert!(loading.ends_with(" vol%"), "{loading}");
        let seed = r3.lines().find(|l| l.contains("seed:")).unwrap();
        assert!(
            seed.trim()["seed: ".len()..].parse::<u64>().is_ok(),
            "{seed}"
        );
    }
    let r1 = read(&dir.join("out/r5/runs/run-0001.yaml"));
    let r2 = read(&dir.join("out/r5/runs/run-0002.yaml"));
    assert_ne!(body(&r1), body(&r2).replace("run-0002", "run-0001"));
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn the_example_sweeps_expand_into_valid_runs() {
    let repo = Path::new(env!("CARGO_MANIFEST_DIR")).parent().unwrap();
    let dir = temp_dir("sweep-examples");
    // Copied, so that expanding writes nothing into the repository.
    for e in std::fs::read_dir(repo.join("scenarios")).unwrap() {
        let p = e.unwrap().path();
        if p.extension().is_some_and(|x| x == "yaml") {
            std::fs::copy(&p, dir.join(p.file_name().unwrap())).unwrap();
        }
    }
    let mut n = 0;
    for e in std::fs::read_dir(repo.join("scenarios/sweeps")).unwrap() {
        let p = e.unwrap().path();
        if p.extension().is_none_or(|x| x != "yaml") {
            continue;
        }
        let copy = dir.join("sweeps").join(p.file_name().unwrap());
        write(&copy, &read(&p));
        let o = run_in(&dir, &["sweep", "expand", copy.to_str().unwrap()]);
        assert!(o.status.success(), "{}: {}", p.display(), text(&o.stderr));
        assert!(text(&o.stdout).contains("all valid"), "{}", text(&o.stdout));
        n += 1;
    }
    assert!(n >= 1, "no example sweeps in scenarios/sweeps");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn expansion_errors_name_the_sweep_file_the_run_and_the_key() {
    let dir = temp_dir("sweep-errors");
    write(&dir.join("base.yaml"), &base(3000));
    let cases = [
        (
            // Run 3 asks for a loading above the packing limit (0.6).
            "grid:\n  solids.0.size.single: [\"80 µm\"]\n  initial.loading: [\"5 vol%\", \"10 vol%\", \"70 vol%\"]\n",
            // Line 6, column 42: the third item, `"70 vol%"`.
            vec![
                "bad.yaml:6:42: run 3, `initial.loading` = \"70 vol%\"",
                "nothing was run",
            ],
        ),
        (
            "grid:\n  intial.loading: [\"5 vol%\"]\n",
            vec![
                "bad.yaml:5:19: `grid.intial.loading`",
                "did you mean `initial`?",
            ],
        ),
        (
            "grid:\n  solids.1.size.single: [\"5 µm\"]\n",
            vec!["`grid.solids.1.size.single`", "has 1 item"],
        ),
        (
            "list:\n  initial.loading: [\"5 vol%\", \"6 vol%\"]\n  run.seed: [1, 2, 3]\n",
            vec![
                "`list.run.seed`",
                "has 3 values but `initial.loading` has 2",
            ],
        ),
        (
            "random:\n  samples: 2\n  seed: 1\n  parameters:\n    initial.loading: { uniform: { low: \"5 vol%\", high: \"20 g/L\" } }\n",
            vec!["`random.parameters.initial.loading`", "same unit"],
        ),
        (
            "gird:\n  run.seed: [1]\n",
            vec!["bad.yaml:4:1", "unknown field `gird`"],
        ),
        (
            "grid:\n  run.seed: [1]\nlist:\n  run.seed: [1]\n",
            vec!["exactly one of `grid`"],
        ),
        (
            // A varied value that makes another key wrong: named by the run.
            "list:\n  run.seed: [1, 2]\n  run.end_time: [\"2 min\", \"1 s\"]\n",
            vec![
                "bad.yaml: run 2 (run.seed = 2, run.end_time = \"1 s\"): ",
                "run-0002.yaml:",
                "`run.output_interval`: the output interval is longer than the run",
            ],
        ),
    ];
    for (vary, expected) in cases {
        let sweep = format!("sweep: 1\nbase: base.yaml\n# varied:\n{vary}");
        write(&dir.join("bad.yaml"), &sweep);
        let o = run_in(&dir, &["sweep", "run", "bad.yaml"]);
        let err = text(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{sweep}\n{err}");
        for e in expected {
            assert!(err.contains(e), "expected `{e}` for\n{sweep}\ngot:\n{err}");
        }
        assert!(!err.contains("panicked"), "{err}");
        // Nothing ran.
        assert!(!dir.join("out/bad/logs").exists(), "{err}");
    }
    // A problem of the base scenario itself is reported once, at the base.
    write(
        &dir.join("broken.yaml"),
        &base(3000).replace("column:", "colum:"),
    );
    write(
        &dir.join("bad.yaml"),
        "sweep: 1\nbase: broken.yaml\ngrid:\n  run.seed: [1, 2, 3]\n",
    );
    let o = run_in(&dir, &["sweep", "expand", "bad.yaml"]);
    let err = text(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    // Line 10 holds the misspelt `colum:`.
    assert!(err.contains("broken.yaml:10:"), "{err}");
    assert!(err.contains("`vessel`: unknown variant `colum`"), "{err}");
    assert!(
        err.contains("in the base scenario of bad.yaml, so in every run"),
        "{err}"
    );
    assert!(err.contains("did you mean `column`?"), "{err}");
    assert_eq!(err.matches("error:").count(), 1, "{err}");
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn local_pool_runs_a_sweep_reports_a_failed_run_and_resumes() {
    let dir = temp_dir("sweep-pool");
    write(&dir.join("base.yaml"), &base(3000));
    write(&dir.join("grid.yaml"), GRID);
    // Make run 2 fail at the end: its result file cannot replace a directory.
    let blocker = dir.join("out/grid/runs/run-0002.h5");
    std::fs::create_dir_all(&blocker).unwrap();
    let started = Instant::now();
    let o = run_in(
        &dir,
        &["sweep", "run", "grid.yaml", "--jobs", "2", "--threads", "1"],
    );
    let (out, err) = (text(&o.stdout), text(&o.stderr));
    eprintln!(
        "first pass {:.1} s:\n{out}{err}",
        started.elapsed().as_secs_f64()
    );
    assert_eq!(
        o.status.code(),
        Some(4),
        "some runs failed: exit 4\n{out}{err}"
    );
    assert!(
        out.contains("3 complete (0 from before), 1 failed"),
        "{out}"
    );
    assert!(out.contains("run 2 failed: exit code 1"), "{out}");
    assert!(
        out.contains("cannot write"),
        "the run's own error is reported: {out}"
    );
    let csv = read(&dir.join("out/grid/summary.csv"));
    let (header, rows) = table(&csv);
    assert_eq!(
        header,
        [
            "run",
            "status",
            "initial.loading_vol_fraction",
            "solids[0].size.single_m",
            "final_interface_height_m",
            "final_bed_height_m",
            "clarification_time_90_s",
            "simulated_time_s"
        ]
    );
    let status: Vec<&str> = rows.iter().map(|r| r[1].as_str()).collect();
    assert_eq!(status, ["complete", "failed", "complete", "complete"]);

    // Restart: only run 2 runs again.
    std::fs::remove_dir(&blocker).unwrap();
    let o = run_in(&dir, &["sweep", "run", "grid.yaml", "--jobs", "2"]);
    let (out, err) = (text(&o.stdout), text(&o.stderr));
    assert_eq!(o.status.code(), Some(0), "{out}{err}");
    assert!(err.contains("3 already complete, 1 to run"), "{err}");
    assert!(err.contains("run 2: complete"), "{err}");
    let (_, rows) = table(&read(&dir.join("out/grid/summary.csv")));
    for r in &rows {
        assert_eq!(r[1], "complete", "{r:?}");
        let phi0: f64 = r[2].parse().unwrap();
        let d: f64 = r[3].parse().unwrap();
        let bed: f64 = r[5].parse().unwrap();
        let t90: f64 = r[6].parse().unwrap();
        // Parameters in SI: vol% / 100 and µm × 1e-6 (unit definitions).
        assert!(
            [0.05, 0.15].contains(&phi0) && [80e-6, 98e-6].iter().any(|x| (d - x).abs() < 1e-15)
        );
        // Exact solids balance: after 2 min everything has settled (the
        // 98 µm beads fall ~5 mm/s in clear water, 0.2 m in under a minute),
        // so the bed holds all solids at the packing limit: h = φ0 H / φmax.
        let exact = phi0 * 0.2 / 0.6;
        assert!((bed - exact).abs() < 1e-9, "bed {bed} vs {exact}");
        // Clarification happens within the run.
        assert!(t90 > 0.0 && t90 < 120.0, "{t90}");
        assert_eq!(r[7], "120");
    }
    // Larger particles clear faster at the same loading (Stokes: v ∝ d²).
    assert!(rows[1][6].parse::<f64>().unwrap() < rows[0][6].parse::<f64>().unwrap());

    // The HDF5 table: one variable per column, each number with units.
    let nc = netcdf_reader::NcFile::open(dir.join("out/grid/summary.h5")).unwrap();
    for (name, units) in [
        ("run", "1"),
        ("initial_loading", "1"),
        ("solids_0_size_single", "m"),
        ("final_bed_height", "m"),
        ("clarification_time_90", "s"),
    ] {
        let v = nc
            .variable(name)
            .unwrap_or_else(|e| panic!("no {name}: {e}"));
        let u = v.attribute("units").and_then(|a| a.value.as_string());
        assert_eq!(u.as_deref(), Some(units), "{name}");
    }
    let bed: Vec<f64> = nc
        .read_variable_as_f64("final_bed_height")
        .unwrap()
        .iter()
        .copied()
        .collect();
    let bed_csv: Vec<f64> = rows.iter().map(|r| r[5].parse().unwrap()).collect();
    assert_eq!(bed, bed_csv);

    // A changed sweep: runs 3 and 4 get another loading, so their old
    // results are stale and only they run again.
    write(&dir.join("grid.yaml"), &GRID.replace("15 vol%", "12 vol%"));
    let o = run_in(&dir, &["sweep", "run", "grid.yaml", "--jobs", "2"]);
    let err = text(&o.stderr);
    assert_eq!(o.status.code(), Some(0), "{err}");
    assert!(err.contains("2 already complete, 2 to run"), "{err}");
    assert!(err.contains("run 3: redoing it (stale"), "{err}");
    let (_, rows) = table(&read(&dir.join("out/grid/summary.csv")));
    assert_eq!(rows[2][2], "0.12");
    std::fs::remove_dir_all(&dir).ok();
}

/// Processes whose command line mentions `dir` (our sweep's runs).
fn processes_using(dir: &Path) -> Vec<u32> {
    let needle = dir.to_string_lossy().into_owned();
    let mut pids = Vec::new();
    for e in std::fs::read_dir("/proc").unwrap().flatten() {
        let Ok(pid) = e.file_name().to_string_lossy().parse::<u32>() else {
            continue;
        };
        if let Ok(cmd) = std::fs::read(e.path().join("cmdline"))
            && String::from_utf8_lossy(&cmd).contains(&needle)
        {
            pids.push(pid);
        }
    }
    pids
}

#[test]
fn a_sweep_killed_midway_and_restarted_redoes_only_the_unfinished_runs() {
    let dir = temp_dir("sweep-kill");
    write(&dir.join("base.yaml"), &base(4000));
    write(
        &dir.join("seeds.yaml"),
        "sweep: 1\nbase: base.yaml\nlist:\n  run.seed: [1, 2, 3, 4, 5, 6]\n",
    );
    let runs = dir.join("out/seeds/runs");
    let summary = |i: usize| runs.join(format!("run-000{i}.summary.json"));
    let complete = |i: usize| {
        std::fs::read_to_string(summary(i)).is_ok_and(|t| t.contains("\"status\": \"complete\""))
    };
    let mut pool = turbid()
        .current_dir(&dir)
        .args([
            "sweep",
            "run",
            "seeds.yaml",
            "--jobs",
            "1",
            "--progress",
            "log",
        ])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    // Kill the sweep (SIGKILL: no chance to clean up) once two runs are done.
    let t0 = Instant::now();
    while !(complete(1) && complete(2)) {
        assert!(t0.elapsed() < Duration::from_secs(120), "runs too slow");
        assert!(
            pool.try_wait().unwrap().is_none(),
            "the sweep ended too early"
        );
        std::thread::sleep(Duration::from_millis(20));
    }
    pool.kill().unwrap();
    pool.wait().unwrap();
    // The run in flight dies with the sweep (parent-death signal): nothing
    // of this sweep keeps running unattended.
    let t0 = Instant::now();
    while !processes_using(&dir).is_empty() {
        assert!(
            t0.elapsed() < Duration::from_secs(30),
            "runs outlived the killed sweep: {:?}",
            processes_using(&dir)
        );
        std::thread::sleep(Duration::from_millis(50));
    }
    let done: Vec<usize> = (1..=6).filter(|&i| complete(i)).collect();
    assert!(done.len() >= 2 && done.len() < 6, "killed midway: {done:?}");
    let before: Vec<(Vec<u8>, std::time::SystemTime)> = done
        .iter()
        .map(|&i| {
            let p = summary(i);
            (
                std::fs::read(&p).unwrap(),
                std::fs::metadata(&p).unwrap().modified().unwrap(),
            )
        })
        .collect();

    let o = run_in(&dir, &["sweep", "run", "seeds.yaml", "--jobs", "2"]);
    let err = text(&o.stderr);
    assert_eq!(o.status.code(), Some(0), "{err}");
    let k = done.len();
    assert!(
        err.contains(&format!("{k} already complete, {} to run", 6 - k)),
        "{err}"
    );
    for i in 1..=6 {
        let redone = err.contains(&format!("run {i}: complete"));
        assert_eq!(redone, !done.contains(&i), "run {i}:\n{err}");
        assert!(complete(i), "run {i}");
    }
    // The runs finished before the kill were left untouched.
    for (&i, (bytes, mtime)) in done.iter().zip(&before) {
        let p = summary(i);
        assert_eq!(&std::fs::read(&p).unwrap(), bytes, "run {i}");
        assert_eq!(
            &std::fs::metadata(&p).unwrap().modified().unwrap(),
            mtime,
            "run {i}"
        );
    }
    std::fs::remove_dir_all(&dir).ok();
}

#[test]
fn sigterm_stops_a_sweep_whose_runs_save_checkpoints() {
    let dir = temp_dir("sweep-term");
    // Long enough runs (about 10 s each here) to be caught in flight.
    write(&dir.join("base.yaml"), &base(40000));
    write(
        &dir.join("seeds.yaml"),
        "sweep: 1\nbase: base.yaml\nlist:\n  run.seed: [1, 2, 3]\n",
    );
    let pool = turbid()
        .current_dir(&dir)
        .args([
            "sweep",
            "run",
            "seeds.yaml",
            "--jobs",
            "2",
            "--progress",
            "log",
        ])
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    // Both first runs have started when their logs name the engine.
    let log = |i: usize| dir.join(format!("out/seeds/logs/run-000{i}.log"));
    let t0 = Instant::now();
    while !(1..=2)
        .all(|i| std::fs::read_to_string(log(i)).is_ok_and(|t| t.contains("particle engine")))
    {
        assert!(t0.elapsed() < Duration::from_secs(60), "runs did not start");
        std::thread::sleep(Duration::from_millis(50));
    }
    // A second pool on the same sweep is refused while this one works.
    let second = run_in(&dir, &["sweep", "run", "seeds.yaml"]);
    assert_eq!(second.status.code(), Some(2));
    assert!(
        text(&second.stderr).contains("another `turbid sweep run`"),
        "{}",
        text(&second.stderr)
    );

    std::thread::sleep(Duration::from_millis(500));
    let status = std::process::Command::new("kill")
        .args(["-TERM", &pool.id().to_string()])
        .status()
        .unwrap();
    assert!(status.success());
    let out = pool.wait_with_output().unwrap();
    let (stdout, stderr) = (text(&out.stdout), text(&out.stderr));
    assert_eq!(out.status.code(), Some(3), "{stdout}{stderr}");
    assert!(
        stdout.contains("2 interrupted, 1 not started"),
        "{stdout}{stderr}"
    );
    let (_, rows) = table(&read(&dir.join("out/seeds/summary.csv")));
    let status: Vec<&str> = rows.iter().map(|r| r[1].as_str()).collect();
    // Stopped runs left checkpoints: they are resumable, not merely partial.
    assert_eq!(
        status,
        ["resumable", "resumable", "missing"],
        "{stdout}{stderr}"
    );
    std::fs::remove_dir_all(&dir).ok();
}

/// A sweep over a thickener's underflow flow: the table gains the outlet
/// columns, and each run's underflow concentration is the steady-state mass
/// balance C_u = Q_f C_f / Q_u (exact for an underloaded tank at steady state:
/// everything fed leaves through the floor). Underloaded: with the invented
/// Vesilind sludge v0 = 8 m/h, k = 0.5 L/g and q_u = 0.5 m/h, the Yoshioka
/// limiting flux is 5.16 kg/(m² h) (tests/tests/thickener_continuum.rs
/// computes it), above the feed flux 1.5 m/h × 3 kg/m³ = 4.5 kg/(m² h); a
/// larger q_u only raises the limit.
#[test]
fn a_thickener_sweep_tabulates_the_underflow() {
    let dir = temp_dir("sweep-thickener");
    write(
        &dir.join("tank.yaml"),
        r#"format: 1
title: Pilot tank, invented sludge (sweep test)
fluid:
  water: { temperature: "15 °C" }
solids:
  - name: invented sludge flocs
    density: "1450 kg/m³"
    size: { single: "100 µm" }
vessel:
  thickener:
    height: "2 m"
    feed_level: "1 m"
    cross_section: { area: "1 m²" }
operation:
  feed_flow: "1.5 m³/h"
  feed_solids: "3 g/L"
  underflow: { flow: "0.5 m³/h" }
models:
  hindered:
    vesilind: { v0: "8 m/h", k: "0.5 L/g" }
run:
  end_time: "12 h"
  output_interval: "1 h"
  parcels: 1000
  engine: continuum
numerics:
  cells: 100
output:
  file: tank.h5
  height_bins: 20
"#,
    );
    write(
        &dir.join("flows.yaml"),
        "sweep: 1\nbase: tank.yaml\nlist:\n  operation.underflow.flow: [\"0.5 m³/h\", \"0.6 m³/h\"]\n",
    );
    let o = run_in(&dir, &["sweep", "run", "flows.yaml", "--jobs", "2"]);
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}{}",
        text(&o.stdout),
        text(&o.stderr)
    );
    let (header, rows) = table(&read(&dir.join("out/flows/summary.csv")));
    let col = |name: &str| {
        header
            .iter()
            .position(|h| h == name)
            .unwrap_or_else(|| panic!("no column {name} in {header:?}"))
    };
    let cu = col("final_underflow_concentration_kg_m3");
    col("final_blanket_level_m");
    col("final_overflow_concentration_kg_m3");
    for (row, q_u) in rows.iter().zip([0.5, 0.6]) {
        let got: f64 = row[cu].parse().unwrap();
        let want = 1.5 * 3.0 / q_u;
        assert!(
            (got - want).abs() <= 1e-3 * want,
            "Q_u = {q_u} m³/h: underflow {got} kg/m³, mass balance {want}"
        );
    }
}

#[test]
fn a_restarted_pool_resumes_runs_from_their_checkpoints() {
    let dir = temp_dir("sweep-resume");
    write(&dir.join("base.yaml"), &base(6000));
    write(
        &dir.join("one.yaml"),
        "sweep: 1\nbase: base.yaml\nlist:\n  run.seed: [4]\n",
    );
    let expand = run_in(&dir, &["sweep", "expand", "one.yaml"]);
    assert!(expand.status.success(), "{}", text(&expand.stderr));
    let runs = dir.join("out/one/runs");
    let scenario = std::fs::read_dir(&runs)
        .unwrap()
        .map(|e| e.unwrap().path())
        .find(|p| p.extension().is_some_and(|x| x == "yaml"))
        .expect("the run's scenario file");
    let output = scenario.with_extension("h5");
    let checkpoint = scenario.with_extension("checkpoint");
    // Stop the run by hand once it has written a checkpoint (as a Slurm
    // time limit would).
    let mut child = turbid()
        .current_dir(&dir)
        .arg("run")
        .arg(&scenario)
        .arg("-o")
        .arg(&output)
        .args([
            "--threads",
            "1",
            "--progress",
            "none",
            "--checkpoint-every",
            "0.003",
        ])
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    let t0 = Instant::now();
    while !checkpoint.exists() {
        assert!(
            child.try_wait().unwrap().is_none(),
            "ended before a checkpoint"
        );
        assert!(t0.elapsed() < Duration::from_secs(60), "no checkpoint");
        std::thread::sleep(Duration::from_millis(20));
    }
    let status = std::process::Command::new("kill")
        .args(["-TERM", &child.id().to_string()])
        .status()
        .unwrap();
    assert!(status.success());
    assert_eq!(child.wait().unwrap().code(), Some(5));
    // The pool continues it with `--resume` instead of starting over.
    let again = run_in(&dir, &["sweep", "run", "one.yaml"]);
    let (stdout, stderr) = (text(&again.stdout), text(&again.stderr));
    assert!(again.status.success(), "{stdout}{stderr}");
    assert!(
        stderr.contains("with a checkpoint; continuing from it"),
        "{stderr}"
    );
    let log = std::fs::read_dir(dir.join("out/one/logs"))
        .unwrap()
        .map(|e| read(&e.unwrap().path()))
        .collect::<String>();
    assert!(log.contains("resumed from"), "{log}");
    assert!(!checkpoint.exists());
    let (_, rows) = table(&read(&dir.join("out/one/summary.csv")));
    assert_eq!(rows[0][1], "complete");
    std::fs::remove_dir_all(&dir).ok();
}
