//! `turbid run` gives the same results on 1 and 2 threads: the settling-curve
//! CSV byte for byte, and the HDF5 file byte for byte except the creation
//! time in its `history` attribute (and the checksum of the HDF5 object
//! header that holds it); every variable and every other attribute, read
//! back with the independent `netcdf-reader` crate, is bit-identical.

use netcdf_reader::{NcFile, NcType};
use std::path::{Path, PathBuf};
use std::process::Command;

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

/// Length of the UTC time stamp that starts `history`: `YYYY-MM-DDTHH:MM:SSZ`.
const STAMP: usize = 20;

struct Scratch(PathBuf);

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

fn run(scenario: &Path, out: &Path, threads: &str) {
    let o = Command::new(env!("CARGO_BIN_EXE_turbid"))
        .args([
            "run",
            scenario.to_str().unwrap(),
            "-o",
            out.to_str().unwrap(),
        ])
        .args(["--threads", threads, "--progress", "none"])
        .output()
        .expect("run turbid");
    assert!(
        o.status.success(),
        "turbid run --threads {threads} failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
}

fn find(haystack: &[u8], needle: &[u8]) -> Option<usize> {
    haystack.windows(needle.len()).position(|w| w == needle)
}

#[test]
fn run_output_is_identical_on_one_and_two_threads() {
    let dir = Scratch(std::env::temp_dir().join(format!("turbid-threads-{}", std::process::id())));
    let _ = std::fs::remove_dir_all(&dir.0);
    std::fs::create_dir_all(dir.0.join("one")).unwrap();
    std::fs::create_dir_all(dir.0.join("two")).unwrap();
    let scenario = dir.0.join("scenario.yaml");
    std::fs::write(
        &scenario,
        resized(&[
            ("end_time: \"40 s\"", "end_time: \"50 s\""),
            ("parcels: 3000", "parcels: 4000"),
            ("height_bins: 30", "height_bins: 40"),
        ]),
    )
    .unwrap();
    // Same file name in two directories, so that nothing can differ by name.
    let (a, b) = (dir.0.join("one/run.h5"), dir.0.join("two/run.h5"));
    run(&scenario, &a, "1");
    run(&scenario, &b, "2");

    // The settling curve, byte for byte.
    let csv_a = std::fs::read(dir.0.join("one/run.settling.csv")).unwrap();
    let csv_b = std::fs::read(dir.0.join("two/run.settling.csv")).unwrap();
    assert!(csv_a.len() > 200, "settling CSV too short");
    assert!(csv_a == csv_b, "settling CSVs differ");

    // The HDF5 files, byte for byte, except the time stamp of `history` and
    // at most one 4-byte window after it: the Jenkins checksum that closes
    // the version-2 HDF5 object header holding the attribute.
    let (h_a, h_b) = (std::fs::read(&a).unwrap(), std::fs::read(&b).unwrap());
    assert_eq!(h_a.len(), h_b.len(), "HDF5 files differ in length");
    let mark = b": written by turbid";
    let at = find(&h_a, mark).expect("history attribute in the file");
    assert_eq!(find(&h_b, mark), Some(at), "history at different offsets");
    let stamp = at - STAMP..at;
    let others: Vec<usize> = (0..h_a.len())
        .filter(|&i| h_a[i] != h_b[i] && !stamp.contains(&i))
        .collect();
    if let (Some(&first), Some(&last)) = (others.first(), others.last()) {
        assert!(
            first > at && last - first < 4,
            "HDF5 bytes differ outside the time stamp: offsets {others:?} (stamp at {stamp:?})"
        );
    }

    // Read back: every variable bit for bit, every attribute but `history`.
    let (f_a, f_b) = (NcFile::open(&a).unwrap(), NcFile::open(&b).unwrap());
    let attributes = |f: &NcFile| {
        f.global_attributes()
            .unwrap()
            .iter()
            .filter(|a| a.name != "history")
            .map(|a| format!("{a:?}"))
            .collect::<Vec<String>>()
    };
    assert_eq!(attributes(&f_a), attributes(&f_b));
    let history = |f: &NcFile| {
        f.global_attribute("history")
            .unwrap()
            .value
            .as_string()
            .unwrap()[STAMP..]
            .to_string()
    };
    assert_eq!(history(&f_a), history(&f_b));
    assert_eq!(
        format!("{:?}", f_a.dimensions().unwrap()),
        format!("{:?}", f_b.dimensions().unwrap())
    );
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
            assert!(x == y, "variable {name} differs");
        }
    }
    // Not a vacuous comparison: eleven records, and the interface has fallen.
    let interface = f_a.read_variable::<f64>("interface_height").unwrap();
    let interface: Vec<f64> = interface.iter().copied().collect();
    assert_eq!(interface.len(), 11);
    assert!(interface[10] < 0.9 * interface[0], "{interface:?}");
}
