//! Writes synthetic records and reads them back with the independent
//! `netcdf-reader` crate.
//!
//! Set `TURBID_KEEP_TEST_OUTPUT=<path.nc>` to also keep a copy of the
//! round-trip file (and its settling CSV) for the Python interoperability
//! check: `tools/interop/run_check.sh <path.nc>`.

use super::*;
use crate::record::{Frame, RecordLayout, RunStatus};
use netcdf_reader::{NcFile, NcFormat};

const NZ: usize = 4;
const NC: usize = 2;
const NT: usize = 3;

/// A fresh empty directory under the system temp dir, removed on drop.
struct Scratch(PathBuf);

impl Scratch {
    fn new(tag: &str) -> Self {
        let dir = std::env::temp_dir().join(format!(
            "turbid-output-{tag}-{}-{}",
            std::process::id(),
            TEMP_COUNTER.fetch_add(1, Ordering::Relaxed)
        ));
        let _ = fs::remove_dir_all(&dir);
        fs::create_dir_all(&dir).unwrap();
        Scratch(dir)
    }
    fn entries(&self) -> Vec<String> {
        let mut names: Vec<String> = fs::read_dir(&self.0)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        names.sort();
        names
    }
}

impl Drop for Scratch {
    fn drop(&mut self) {
        let _ = fs::remove_dir_all(&self.0);
    }
}

/// Volume fraction of class `c` in slab `k` at frame `i`: every value distinct.
fn phi(i: usize, c: usize, k: usize) -> f64 {
    0.01 * (c + 1) as f64 + 0.001 * k as f64 + 0.0001 * i as f64
}

/// 2 classes of 2 species, 4 slabs of 0.1 m, 3 frames.
fn sample(status: RunStatus) -> RunRecord {
    let layout = RecordLayout {
        z: vec![0.05, 0.15, 0.25, 0.35],
        z_edges: vec![0.0, 0.1, 0.2, 0.3, 0.4],
        class_diameter: vec![20e-6, 80e-6],
        class_lower: vec![10e-6, 40e-6],
        class_upper: vec![40e-6, 160e-6],
        class_species: vec![1, 0],
        species_name: vec!["quartz".into(), "kaolinite µ-clay".into()],
        species_density: vec![2650.0, 2600.0],
        class_terminal_velocity: vec![2.2e-4, 3.5e-3],
        area: 2.5e-3,
    };
    let frames = (0..NT)
        .map(|i| Frame {
            time: 30.0 * i as f64,
            phi_class: (0..NC)
                .flat_map(|c| (0..NZ).map(move |k| phi(i, c, k)))
                .collect(),
            interface_height: [0.4, 0.35, 0.3][i],
            bed_height: 0.01 * i as f64,
            solids_volume: 1.2e-5,
        })
        .collect();
    RunRecord {
        layout,
        frames,
        status,
        scenario_yaml: "title: \"Quartz – 2 classes\"\nfluid:\n  temperature: 20 °C\n".into(),
        title: "Quartz – 2 classes".into(),
        seed: u64::MAX - 7,
        engine: "particle".into(),
        resolution: 40_000,
        outlets: None,
    }
}

fn attr_text(f: &NcFile, name: &str) -> String {
    f.global_attribute(name)
        .unwrap_or_else(|e| panic!("global attribute {name}: {e}"))
        .value
        .as_string()
        .unwrap_or_else(|| panic!("global attribute {name} is not text"))
}

fn var_attr_text(f: &NcFile, var: &str, name: &str) -> Option<String> {
    f.variable(var)
        .unwrap()
        .attribute(name)
        .and_then(|a| a.value.as_string())
}

fn read_f64(f: &NcFile, name: &str) -> (Vec<usize>, Vec<f64>) {
    let a = f.read_variable::<f64>(name).unwrap();
    (a.shape().to_vec(), a.iter().copied().collect())
}

fn dims(f: &NcFile, name: &str) -> Vec<String> {
    f.variable(name)
        .unwrap()
        .dimensions()
        .iter()
        .map(|d| d.name.clone())
        .collect()
}

fn assert_close(got: &[f64], want: &[f64], what: &str) {
    assert_eq!(got.len(), want.len(), "{what}: length");
    for (i, (g, w)) in got.iter().zip(want).enumerate() {
        assert!(
            (g - w).abs() <= 1e-15 * w.abs().max(1.0),
            "{what}[{i}]: {g} != {w}"
        );
    }
}

#[test]
fn netcdf_round_trip_keeps_layout_values_and_metadata() {
    let scratch = Scratch::new("roundtrip");
    let path = scratch.0.join("run.nc");
    let record = sample(RunStatus::Complete);
    write_netcdf(&record, &path).unwrap();
    let f = NcFile::open(&path).unwrap();
    assert_eq!(f.format(), NcFormat::Nc4);

    // Dimensions.
    let mut got_dims: Vec<(String, u64, bool)> = f
        .dimensions()
        .unwrap()
        .iter()
        .map(|d| (d.name.clone(), d.size, d.is_unlimited))
        .collect();
    got_dims.sort();
    let mut want_dims = vec![
        ("time".to_string(), NT as u64, true),
        ("z".to_string(), NZ as u64, false),
        ("size_class".to_string(), NC as u64, false),
        ("species".to_string(), 2, false),
        ("bounds".to_string(), 2, false),
    ];
    want_dims.sort();
    assert_eq!(got_dims, want_dims);

    // Every variable: dimensions and units.
    let expected: [(&str, &[&str], Option<&str>); 17] = [
        ("time", &["time"], Some("s")),
        ("z", &["z"], Some("m")),
        ("size_class", &["size_class"], Some("m")),
        ("volume_fraction", &["time", "z"], Some("1")),
        (
            "volume_fraction_by_class",
            &["time", "size_class", "z"],
            Some("1"),
        ),
        ("mass_concentration", &["time", "z"], Some("kg m-3")),
        ("interface_height", &["time"], Some("m")),
        ("bed_height", &["time"], Some("m")),
        ("solids_volume", &["time"], Some("m3")),
        ("z_bounds", &["z", "bounds"], Some("m")),
        ("class_lower_diameter", &["size_class"], Some("m")),
        ("class_upper_diameter", &["size_class"], Some("m")),
        ("class_terminal_velocity", &["size_class"], Some("m s-1")),
        ("class_species", &["size_class"], Some("1")),
        ("species_name", &["species"], None),
        ("species_density", &["species"], Some("kg m-3")),
        ("vessel_area", &[], Some("m2")),
    ];
    let mut names: Vec<&str> = f.variables().unwrap().iter().map(|v| v.name()).collect();
    names.sort();
    let mut want_names: Vec<&str> = expected.iter().map(|e| e.0).collect();
    want_names.sort();
    assert_eq!(names, want_names);
    for (name, want_dims, units) in expected {
        assert_eq!(dims(&f, name), want_dims, "{name} dimensions");
        assert_eq!(var_attr_text(&f, name, "units").as_deref(), units, "{name}");
        assert!(
            var_attr_text(&f, name, "long_name").is_some_and(|s| !s.is_empty()),
            "{name} has no long_name"
        );
    }
    assert_eq!(var_attr_text(&f, "z", "positive").as_deref(), Some("up"));
    assert_eq!(var_attr_text(&f, "z", "axis").as_deref(), Some("Z"));
    assert_eq!(
        var_attr_text(&f, "z", "bounds").as_deref(),
        Some("z_bounds")
    );

    // Values.
    let l = &record.layout;
    let (shape, t) = read_f64(&f, "time");
    assert_eq!(shape, [NT]);
    assert_eq!(t, [0.0, 30.0, 60.0]);
    assert_eq!(read_f64(&f, "z").1, l.z);
    assert_eq!(read_f64(&f, "size_class").1, l.class_diameter);
    let (shape, zb) = read_f64(&f, "z_bounds");
    assert_eq!(shape, [NZ, 2]);
    assert_eq!(zb, [0.0, 0.1, 0.1, 0.2, 0.2, 0.3, 0.3, 0.4]);

    let (shape, by_class) = read_f64(&f, "volume_fraction_by_class");
    assert_eq!(shape, [NT, NC, NZ]);
    let mut total = Vec::new();
    let mut mass = Vec::new();
    for i in 0..NT {
        for c in 0..NC {
            for k in 0..NZ {
                assert_eq!(by_class[(i * NC + c) * NZ + k], phi(i, c, k));
            }
        }
        for k in 0..NZ {
            total.push(phi(i, 0, k) + phi(i, 1, k));
            // Class 0 is species 1 (2600), class 1 is species 0 (2650).
            mass.push(phi(i, 0, k) * 2600.0 + phi(i, 1, k) * 2650.0);
        }
    }
    let (shape, vf) = read_f64(&f, "volume_fraction");
    assert_eq!(shape, [NT, NZ]);
    assert_close(&vf, &total, "volume_fraction");
    let (shape, mc) = read_f64(&f, "mass_concentration");
    assert_eq!(shape, [NT, NZ]);
    assert_close(&mc, &mass, "mass_concentration");

    assert_eq!(read_f64(&f, "interface_height").1, [0.4, 0.35, 0.3]);
    assert_eq!(read_f64(&f, "bed_height").1, [0.0, 0.01, 0.02]);
    assert_eq!(read_f64(&f, "solids_volume").1, [1.2e-5; 3]);
    assert_eq!(read_f64(&f, "class_lower_diameter").1, l.class_lower);
    assert_eq!(read_f64(&f, "class_upper_diameter").1, l.class_upper);
    assert_eq!(
        read_f64(&f, "class_terminal_velocity").1,
        l.class_terminal_velocity
    );
    let species: Vec<i32> = f
        .read_variable::<i32>("class_species")
        .unwrap()
        .iter()
        .copied()
        .collect();
    assert_eq!(species, [1, 0]);
    assert_eq!(
        f.read_variable_as_strings("species_name").unwrap(),
        l.species_name
    );
    assert_eq!(read_f64(&f, "species_density").1, l.species_density);
    let (shape, area) = read_f64(&f, "vessel_area");
    assert!(shape.is_empty());
    assert_eq!(area, [2.5e-3]);

    // Global attributes.
    assert_eq!(attr_text(&f, "Conventions"), "CF-1.10");
    assert_eq!(attr_text(&f, "title"), record.title);
    assert_eq!(
        attr_text(&f, "source"),
        format!("turbid {}", env!("CARGO_PKG_VERSION"))
    );
    assert_eq!(attr_text(&f, "scenario_yaml"), record.scenario_yaml);
    assert_eq!(attr_text(&f, "engine"), "particle");
    assert_eq!(attr_text(&f, "run_status"), "complete");
    let history = attr_text(&f, "history");
    let (stamp, rest) = history.split_once(": ").unwrap();
    assert!(is_iso_utc(stamp), "history time stamp {stamp:?}");
    assert_eq!(
        rest,
        format!(
            "written by {} (particle engine, run complete)",
            source_text()
        )
    );
    let number = |name: &str| f.global_attribute(name).unwrap().value.clone();
    assert_eq!(number("seed"), NcAttrValue::UInt64s(vec![u64::MAX - 7]));
    assert_eq!(number("resolution"), NcAttrValue::UInt64s(vec![40_000]));

    if let Some(keep) = std::env::var_os("TURBID_KEEP_TEST_OUTPUT") {
        let keep = PathBuf::from(keep);
        write_netcdf(&record, &keep).unwrap();
        write_settling_csv(&record, &settling_csv_path(&keep)).unwrap();
    }
}

fn is_iso_utc(s: &str) -> bool {
    let b = s.as_bytes();
    b.len() == 20
        && b.iter().enumerate().all(|(i, &c)| match i {
            4 | 7 => c == b'-',
            10 => c == b'T',
            13 | 16 => c == b':',
            19 => c == b'Z',
            _ => c.is_ascii_digit(),
        })
}

#[test]
fn long_scenario_text_is_kept_whole() {
    // Well past the 64 KiB an HDF5 object-header message can hold.
    let scratch = Scratch::new("long-yaml");
    let path = scratch.0.join("run.nc");
    let mut record = sample(RunStatus::Complete);
    record.scenario_yaml = "# a comment line of the scenario, µm and °C\n".repeat(5000);
    write_netcdf(&record, &path).unwrap();
    let f = NcFile::open(&path).unwrap();
    assert_eq!(attr_text(&f, "scenario_yaml"), record.scenario_yaml);
}

#[test]
fn partial_run_is_marked_in_both_files() {
    let scratch = Scratch::new("partial");
    let path = scratch.0.join("run.nc");
    let record = sample(RunStatus::Partial);
    write_netcdf(&record, &path).unwrap();
    write_settling_csv(&record, &settling_csv_path(&path)).unwrap();
    let f = NcFile::open(&path).unwrap();
    assert_eq!(attr_text(&f, "run_status"), "partial");
    assert!(attr_text(&f, "history").ends_with("(particle engine, run partial)"));
    let csv = fs::read_to_string(scratch.0.join("run.settling.csv")).unwrap();
    assert!(csv.lines().any(|l| l == "# run_status: partial"), "{csv}");
}

#[test]
fn run_without_frames_writes_an_empty_time_axis() {
    let scratch = Scratch::new("empty");
    let path = scratch.0.join("run.nc");
    let mut record = sample(RunStatus::Partial);
    record.frames.clear();
    write_netcdf(&record, &path).unwrap();
    let f = NcFile::open(&path).unwrap();
    assert_eq!(f.dimension("time").unwrap().size, 0);
    assert_eq!(
        f.variable("volume_fraction_by_class").unwrap().shape(),
        [0, NC as u64, NZ as u64]
    );
    assert_eq!(read_f64(&f, "z").1, record.layout.z);
}

#[test]
fn write_creates_parents_replaces_the_old_file_and_leaves_no_temporary() {
    let scratch = Scratch::new("atomic");
    let path = scratch.0.join("a").join("b").join("run.nc");
    let mut record = sample(RunStatus::Complete);
    write_netcdf(&record, &path).unwrap();
    assert_eq!(
        NcFile::open(&path).unwrap().dimension("time").unwrap().size,
        3
    );

    record.frames.truncate(1);
    record.title = "second".into();
    write_netcdf(&record, &path).unwrap();
    let f = NcFile::open(&path).unwrap();
    assert_eq!(f.dimension("time").unwrap().size, 1);
    assert_eq!(attr_text(&f, "title"), "second");
    let names: Vec<String> = fs::read_dir(path.parent().unwrap())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(names, ["run.nc"]);
}

#[test]
fn failed_write_keeps_the_previous_file_and_names_the_path() {
    let scratch = Scratch::new("failed");
    let path = scratch.0.join("run.nc");
    let record = sample(RunStatus::Complete);
    write_netcdf(&record, &path).unwrap();
    let before = fs::read(&path).unwrap();

    // Inconsistent record: refused before anything is written.
    let mut bad = record.clone();
    bad.frames[1].phi_class.pop();
    let err = write_netcdf(&bad, &path).unwrap_err();
    assert!(matches!(err, OutputError::InvalidRecord { .. }), "{err:?}");
    let msg = err.to_string();
    assert!(msg.contains(&path.display().to_string()), "{msg}");
    assert!(msg.contains("frame 1 has 7 volume fractions"), "{msg}");

    // Refused by the encoder: a NUL inside a string.
    let mut bad = record.clone();
    bad.layout.species_name[0] = "qu\0artz".into();
    let err = write_netcdf(&bad, &path).unwrap_err();
    assert!(matches!(err, OutputError::Encode { .. }), "{err:?}");

    // Failure half-way through writing the temporary file.
    let err = write_atomically(&path, |w| {
        w.write_all(&[0; 100_000]).unwrap();
        w.flush().unwrap();
        Err(OutputError::NotAFilePath { path: path.clone() })
    })
    .unwrap_err();
    assert!(matches!(err, OutputError::NotAFilePath { .. }), "{err:?}");

    // The target is a directory: the rename fails.
    let dir_target = scratch.0.join("taken");
    fs::create_dir(&dir_target).unwrap();
    let err = write_netcdf(&record, &dir_target).unwrap_err();
    assert!(matches!(err, OutputError::Io { .. }), "{err:?}");
    assert!(
        err.to_string().contains(&dir_target.display().to_string()),
        "{err}"
    );

    assert_eq!(fs::read(&path).unwrap(), before);
    assert_eq!(scratch.entries(), ["run.nc", "taken"]);
}

#[test]
fn profiles_are_chunked_and_deflated() {
    // 50 frames × 3 classes × 100 slabs of one value: 120 kB raw for the 3-D
    // variable alone; deflate brings the whole file far below that.
    let scratch = Scratch::new("deflate");
    let path = scratch.0.join("run.nc");
    let mut record = sample(RunStatus::Complete);
    let l = &mut record.layout;
    let nz = 100;
    l.z_edges = (0..=nz).map(|k| k as f64 * 0.004).collect();
    l.z = l.z_edges.windows(2).map(|w| 0.5 * (w[0] + w[1])).collect();
    l.class_diameter.push(150e-6);
    l.class_lower.push(160e-6);
    l.class_upper.push(320e-6);
    l.class_species.push(0);
    l.class_terminal_velocity.push(1e-2);
    record.frames = (0..50)
        .map(|i| Frame {
            time: i as f64,
            phi_class: vec![0.02; 3 * nz],
            interface_height: 0.4,
            bed_height: 0.0,
            solids_volume: 1e-5,
        })
        .collect();
    write_netcdf(&record, &path).unwrap();
    let size = fs::metadata(&path).unwrap().len();
    let raw = 50 * nz * (3 + 2) * 8;
    assert!(
        size < raw as u64 / 4,
        "file {size} B for {raw} B of profiles"
    );
    let f = NcFile::open(&path).unwrap();
    let (shape, v) = read_f64(&f, "volume_fraction");
    assert_eq!(shape, [50, nz]);
    assert!(v.iter().all(|&x| (x - 0.06).abs() < 1e-15));
}

#[test]
fn settling_csv_has_comments_header_and_rows() {
    let scratch = Scratch::new("csv");
    let path = scratch.0.join("sub").join("run.settling.csv");
    let mut record = sample(RunStatus::Complete);
    record.title = "two\nlines".into();
    record.frames[2].solids_volume = 1.25e-9;
    write_settling_csv(&record, &path).unwrap();
    let text = fs::read_to_string(&path).unwrap();
    let want = format!(
        "# title: two lines\n# source: {}\n# run_status: complete\n\
         time_s,interface_height_m,bed_height_m,solids_volume_m3\n\
         0,0.4,0,1.2e-5\n30,0.35,0.01,1.2e-5\n60,0.3,0.02,1.25e-9\n",
        source_text()
    );
    assert_eq!(text, want);
    assert_eq!(fs::read_dir(path.parent().unwrap()).unwrap().count(), 1);
}

#[test]
fn csv_numbers_read_back_exactly() {
    for x in [
        0.0, -0.0, 1.0, 0.1, 1e-4, 9.99e-5, 1.25e-9, 1e15, 123456.789, -3.5e-7,
    ] {
        let s = csv_number(x);
        assert_eq!(s.parse::<f64>().unwrap().to_bits(), x.to_bits(), "{s}");
    }
    assert_eq!(csv_number(1.25e-9), "1.25e-9");
    assert_eq!(csv_number(2e20), "2e20");
    assert_eq!(csv_number(0.5), "0.5");
}

#[test]
fn settling_csv_sits_beside_the_netcdf_file() {
    assert_eq!(
        settling_csv_path(Path::new("out/run.nc")),
        Path::new("out/run.settling.csv")
    );
    assert_eq!(
        settling_csv_path(Path::new("batch.v2.h5")),
        Path::new("batch.v2.settling.csv")
    );
    assert_eq!(
        settling_csv_path(Path::new("/data/column")),
        Path::new("/data/column.settling.csv")
    );
}

#[test]
fn utc_timestamps_follow_the_gregorian_calendar() {
    let at = |s: u64| utc_timestamp(UNIX_EPOCH + std::time::Duration::from_secs(s));
    assert_eq!(at(0), "1970-01-01T00:00:00Z");
    assert_eq!(at(951_782_400), "2000-02-29T00:00:00Z");
    assert_eq!(at(951_868_799), "2000-02-29T23:59:59Z");
    assert_eq!(at(951_868_800), "2000-03-01T00:00:00Z");
    assert_eq!(at(1_700_000_000), "2023-11-14T22:13:20Z");
    assert_eq!(at(4_107_542_400), "2100-03-01T00:00:00Z"); // 2100 is not a leap year
    assert_eq!(at(253_402_300_799), "9999-12-31T23:59:59Z");
}

#[test]
fn records_with_mismatched_tables_are_refused() {
    let path = Path::new("unused.nc");
    let mut r = sample(RunStatus::Complete);
    r.layout.class_species[0] = 2;
    let msg = write_netcdf(&r, path).unwrap_err().to_string();
    assert!(msg.contains("class_species refers to species 2"), "{msg}");
    let mut r = sample(RunStatus::Complete);
    r.layout.z_edges.pop();
    let msg = write_netcdf(&r, path).unwrap_err().to_string();
    assert!(msg.contains("z_edges has 4 entries, expected 5"), "{msg}");
    assert!(!path.exists());
}

/// The sample record as a thickener run: one outlet sample per frame.
fn thickener_sample() -> RunRecord {
    let mut r = sample(RunStatus::Complete);
    let samples = r
        .frames
        .iter()
        .enumerate()
        .map(|(i, f)| crate::record::OutletSample {
            time: f.time,
            feed_flow: 0.1,
            underflow_flow: 0.03,
            overflow_flow: 0.07,
            feed_concentration: 3.0,
            underflow_concentration: 9.0 + i as f64,
            overflow_concentration: 0.01 * i as f64,
            underflow_concentration_by_class: vec![4.0, 5.0 + i as f64],
            overflow_concentration_by_class: vec![0.01 * i as f64, 0.0],
            feed_solids_rate: 0.3,
            underflow_solids_rate: 0.03 * (9.0 + i as f64),
            overflow_solids_rate: 0.07 * 0.01 * i as f64,
            blanket_level: 0.1 * i as f64,
            solids_in: 9.0 * i as f64,
            solids_out_underflow: 8.0 * i as f64,
            solids_out_overflow: 0.5 * i as f64,
            inventory: 2.0 + 0.5 * i as f64,
            initial_inventory: 2.0,
            balance_residual: 1e-13 * i as f64,
        })
        .collect();
    r.outlets = Some(crate::record::OutletSeries {
        feed_level: 0.25,
        overflow_level: 0.4,
        blanket_threshold: 4.0,
        samples,
    });
    r
}

#[test]
fn thickener_outlets_are_written_as_time_series_with_units() {
    let scratch = Scratch::new("outlets");
    let path = scratch.0.join("tank.nc");
    let record = thickener_sample();
    write_netcdf(&record, &path).unwrap();
    let f = NcFile::open(&path).unwrap();
    assert_eq!(attr_text(&f, "vessel"), "thickener");
    let o = record.outlets.as_ref().unwrap();
    for (name, units, want) in [
        (
            "underflow_solids_concentration",
            "kg m-3",
            o.samples
                .iter()
                .map(|s| s.underflow_concentration)
                .collect::<Vec<_>>(),
        ),
        (
            "overflow_solids_mass_flow",
            "kg s-1",
            o.samples.iter().map(|s| s.overflow_solids_rate).collect(),
        ),
        (
            "blanket_level",
            "m",
            o.samples.iter().map(|s| s.blanket_level).collect(),
        ),
        (
            "solids_balance_residual",
            "kg",
            o.samples.iter().map(|s| s.balance_residual).collect(),
        ),
        ("feed_flow", "m3 s-1", vec![0.1; NT]),
    ] {
        assert_eq!(dims(&f, name), vec!["time"], "{name}");
        assert_eq!(
            var_attr_text(&f, name, "units").as_deref(),
            Some(units),
            "{name}"
        );
        assert!(var_attr_text(&f, name, "long_name").is_some(), "{name}");
        let (shape, got) = read_f64(&f, name);
        assert_eq!(shape, vec![NT]);
        assert_close(&got, &want, name);
    }
    let (shape, got) = read_f64(&f, "underflow_solids_concentration_by_class");
    assert_eq!(shape, vec![NT, NC]);
    assert_close(&got[2..4], &[4.0, 6.0], "by class, frame 1");
    let (_, lip) = read_f64(&f, "overflow_level");
    assert_eq!(lip, vec![0.4]);
    // A batch record has none of it.
    let batch = scratch.0.join("batch.nc");
    write_netcdf(&sample(RunStatus::Complete), &batch).unwrap();
    let f = NcFile::open(&batch).unwrap();
    assert!(f.variable("blanket_level").is_err());
    assert!(f.global_attribute("vessel").is_err());
}

#[test]
fn outlets_csv_has_one_row_per_frame() {
    let scratch = Scratch::new("outlets-csv");
    let nc = scratch.0.join("tank.nc");
    let csv = outlets_csv_path(&nc);
    assert_eq!(csv.file_name().unwrap(), "tank.outlets.csv");
    write_outlets_csv(&thickener_sample(), &csv).unwrap();
    let text = fs::read_to_string(&csv).unwrap();
    let rows: Vec<&str> = text.lines().filter(|l| !l.starts_with('#')).collect();
    assert_eq!(rows[0], OUTLETS_CSV_HEADER);
    assert_eq!(rows.len(), NT + 1);
    let cols = OUTLETS_CSV_HEADER.split(',').count();
    assert!(rows.iter().all(|r| r.split(',').count() == cols));
    // Row of frame 2: time 60 s, underflow 11 kg/m³.
    let cells: Vec<f64> = rows[3].split(',').map(|c| c.parse().unwrap()).collect();
    assert_eq!((cells[0], cells[5]), (60.0, 11.0));
    // Nothing is written for a batch record.
    let none = scratch.0.join("batch.outlets.csv");
    write_outlets_csv(&sample(RunStatus::Complete), &none).unwrap();
    assert!(!none.exists());
}
