//! Shared by the sweep tests: a tiny invented scenario and sweep files in a
//! fresh temporary directory, and the `turbid` binary under test.
#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// A small glass-bead column (invented test case): about a second per run.
pub fn base(parcels: u32) -> String {
    format!(
        r#"format: 1
title: Tiny glass-bead column (invented test case)
fluid:
  water: {{ temperature: "20 °C" }}
solids:
  - name: glass beads
    density: "2500 kg/m³"
    size: {{ single: "98 µm" }}
vessel:
  column:
    height: "0.2 m"
    cross_section: {{ round: {{ diameter: "50 mm" }} }}
initial:
  loading: "10 vol%"
models:
  max_packing: 0.6
run:
  end_time: "2 min"
  output_interval: "5 s"
  parcels: {parcels}
  seed: 7
output:
  file: out/base.h5
  height_bins: 20
"#
    )
}

/// A fresh directory under the system's temporary directory.
pub fn temp_dir(name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("turbid-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    dir
}

pub fn write(path: &Path, text: &str) {
    if let Some(p) = path.parent() {
        std::fs::create_dir_all(p).unwrap();
    }
    std::fs::write(path, text).unwrap();
}

pub fn turbid() -> Command {
    Command::new(env!("CARGO_BIN_EXE_turbid"))
}

pub fn run_in(dir: &Path, args: &[&str]) -> Output {
    turbid()
        .current_dir(dir)
        .args(args)
        .output()
        .expect("run turbid")
}

pub fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

/// The data rows of a gathered summary.csv, as fields (comments and header dropped).
pub fn table(csv: &str) -> (Vec<String>, Vec<Vec<String>>) {
    let mut lines = csv.lines().filter(|l| !l.starts_with('#'));
    let header = lines
        .next()
        .unwrap()
        .split(',')
        .map(str::to_string)
        .collect();
    let rows = lines
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect();
    (header, rows)
}
