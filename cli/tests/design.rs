//! The design commands (`curve`, `size`, `fit`), the plots (`run --plots`,
//! `plot`) and the HTML report (`report`).
//!
//! Promise: the demo run writes its plots, and every plot is a real picture:
//! the PNG has the pixel size the figure asks for, is not blank (a share of
//! non-white pixels and more than a few colours) and the SVG parses as XML
//! with an `svg` root and drawn elements; the report is one HTML file with
//! inline SVG, the key numbers, the scenario text, the caution and no
//! external resource. The numbers the commands print are the library's
//! (`turbid_engine::analysis`, whose own tests cite their sources): the
//! tests call the library on the same input and compare. Bad input exits 2
//! with a message that names the flag or file.
//!
//! The settling curves are those of the continuum engine on a tiny invented
//! glass-bead column, read back as a "lab" CSV in minutes and millimetres.

mod common;

use common::{base, temp_dir, turbid, write};
use std::path::{Path, PathBuf};
use std::process::Output;
use turbid_engine::analysis::curve::{SettlingCurve, Smoothing, kynch};
use turbid_engine::analysis::sizing::{BatchFluxCurve, DesignBasis, coe_clevenger, yoshioka};

fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

fn repo() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .unwrap()
        .to_path_buf()
}

fn ok(o: &Output, what: &str) {
    assert!(
        o.status.success(),
        "{what} failed ({:?}):\n{}\n{}",
        o.status.code(),
        text(&o.stdout),
        text(&o.stderr)
    );
}

/// Loading of `common::base`: 10 vol% of 2500 kg/m³ glass.
const LOADING: &str = "250 g/L";
const HEIGHT: &str = "0.2 m";

/// A continuum run of the tiny column; returns (result .h5, lab CSV).
fn continuum_run(dir: &Path) -> (PathBuf, PathBuf) {
    let scenario = dir.join("column.yaml");
    write(
        &scenario,
        &base(1000).replace("  seed: 7", "  seed: 7\n  engine: continuum"),
    );
    let h5 = dir.join("column.h5");
    let o = turbid()
        .args([
            "run",
            scenario.to_str().unwrap(),
            "-o",
            h5.to_str().unwrap(),
        ])
        .args(["--progress", "none"])
        .output()
        .unwrap();
    ok(&o, "continuum run");
    // The run's settling curve as a lab sheet would have it: minutes, mm.
    let csv = std::fs::read_to_string(dir.join("column.settling.csv")).unwrap();
    let mut lab = String::from(
        "# invented test: the tiny column read as a lab sheet\ntime [min],height [mm]\n",
    );
    for line in csv.lines().filter(|l| !l.starts_with('#')).skip(1) {
        let f: Vec<f64> = line
            .split(',')
            .take(2)
            .map(|x| x.parse().unwrap())
            .collect();
        lab.push_str(&format!("{},{}\n", f[0] / 60.0, f[1] * 1000.0));
    }
    let lab_path = dir.join("lab.csv");
    write(&lab_path, &lab);
    (h5, lab_path)
}

/// Width, height, share of non-white pixels and number of distinct colours.
fn png_stats(path: &Path) -> (u32, u32, f64, usize) {
    let bytes = std::fs::read(path).unwrap();
    // PNG signature, then the IHDR chunk: width and height, big-endian
    // (PNG specification, ISO/IEC 15948, 11.2.2).
    assert_eq!(
        &bytes[..8],
        b"\x89PNG\r\n\x1a\n",
        "{} is not a PNG",
        path.display()
    );
    assert_eq!(&bytes[12..16], b"IHDR");
    let w = u32::from_be_bytes(bytes[16..20].try_into().unwrap());
    let h = u32::from_be_bytes(bytes[20..24].try_into().unwrap());
    let decoder = png::Decoder::new(std::io::Cursor::new(bytes));
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size()];
    let info = reader.next_frame(&mut buf).unwrap();
    let channels = info.color_type.samples();
    let mut colours = std::collections::HashSet::new();
    let mut ink = 0usize;
    for px in buf[..info.buffer_size()].chunks(channels) {
        let rgb = (px[0], px[1], px[2]);
        if rgb != (255, 255, 255) {
            ink += 1;
        }
        colours.insert(rgb);
    }
    (w, h, ink as f64 / (w as f64 * h as f64), colours.len())
}

/// Check a PNG/SVG pair: size, not blank, XML with drawn elements.
fn check_plot(dir: &Path, name: &str, min_ink: f64) {
    let png = dir.join(format!("{name}.png"));
    let svg = dir.join(format!("{name}.svg"));
    assert!(png.is_file(), "missing {}", png.display());
    assert!(svg.is_file(), "missing {}", svg.display());
    let (w, h, ink, colours) = png_stats(&png);
    let svg_text = std::fs::read_to_string(&svg).unwrap();
    let doc = roxmltree::Document::parse(&svg_text)
        .unwrap_or_else(|e| panic!("{} is not XML: {e}", svg.display()));
    let root = doc.root_element();
    assert_eq!(root.tag_name().name(), "svg");
    // The SVG has the PNG's size (one figure, two backends).
    assert_eq!(root.attribute("width"), Some(w.to_string().as_str()));
    assert_eq!(root.attribute("height"), Some(h.to_string().as_str()));
    let count = |tag: &str| doc.descendants().filter(|n| n.has_tag_name(tag)).count();
    assert!(count("text") >= 5, "{name}.svg: axis labels missing");
    assert!(
        count("polyline") + count("rect") + count("circle") + count("path") >= 3,
        "{name}.svg: nothing drawn"
    );
    assert!(w >= 600 && h >= 400, "{name}.png: {w}×{h}");
    assert!(
        ink > min_ink,
        "{name}.png is nearly blank: {:.1} % ink",
        100.0 * ink
    );
    assert!(colours > 8, "{name}.png has only {colours} colours");
}

#[test]
fn demo_run_writes_its_plots() {
    let dir = temp_dir("design-demo");
    let out = dir.join("demo.h5");
    let plots = dir.join("plots");
    let o = turbid()
        .args([
            "run",
            repo()
                .join("scenarios/glass-beads-column.yaml")
                .to_str()
                .unwrap(),
        ])
        .args(["-o", out.to_str().unwrap(), "--progress", "none"])
        .args(["--plots", plots.to_str().unwrap()])
        .output()
        .unwrap();
    ok(&o, "demo run");
    for name in ["settling-curve", "concentration-map", "profiles"] {
        // The map fills most of its frame; the line plots much less.
        check_plot(
            &plots,
            name,
            if name == "concentration-map" {
                0.4
            } else {
                0.02
            },
        );
    }
    // The figure sizes the plot module sets: 900×600 (curve), 1000×600
    // (map), 320 per panel + 80 wide (profiles: 4 panels).
    assert_eq!(png_stats(&plots.join("settling-curve.png")).0, 900);
    assert_eq!(png_stats(&plots.join("concentration-map.png")).0, 1000);
    assert_eq!(png_stats(&plots.join("profiles.png")).0, 4 * 320 + 80);

    // `turbid plot` reads the result file back and draws the same figures.
    let again = dir.join("again");
    let o = turbid()
        .args(["plot", out.to_str().unwrap(), "-o", again.to_str().unwrap()])
        .args(["--times", "0 s,1 min,10 min"])
        .output()
        .unwrap();
    ok(&o, "turbid plot");
    check_plot(&again, "concentration-map", 0.4);
    assert_eq!(png_stats(&again.join("profiles.png")).0, 3 * 320 + 80);

    // The report of the run: one file, inline SVG, the scenario, nothing external.
    let html = dir.join("demo.html");
    let o = turbid()
        .args([
            "report",
            "run",
            out.to_str().unwrap(),
            "-o",
            html.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    ok(&o, "turbid report run");
    let page = std::fs::read_to_string(&html).unwrap();
    assert_eq!(page.matches("<svg").count(), 3);
    assert!(page.contains("Glass beads (90–106 µm sieve cut)"));
    assert!(
        page.contains("richardson_zaki: { exponent: auto }"),
        "scenario text missing"
    );
    assert_self_contained(&page);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn thickener_demo_plots_its_transients() {
    let dir = temp_dir("design-thickener");
    let out = dir.join("thickener.h5");
    let o = turbid()
        .args([
            "run",
            repo()
                .join("scenarios/municipal-thickener.yaml")
                .to_str()
                .unwrap(),
        ])
        .args(["-o", out.to_str().unwrap(), "--progress", "none", "--plots"])
        .output()
        .unwrap();
    ok(&o, "thickener demo run");
    // `--plots` without a directory: `<stem>.plots/` beside the result.
    let plots = dir.join("thickener.plots");
    check_plot(&plots, "thickener-transients", 0.02);
    check_plot(&plots, "concentration-map", 0.4);
    assert!(!plots.join("settling-curve.png").exists());
    // Read back from the file: the same transients, and the report's numbers.
    let html = dir.join("thickener.html");
    let o = turbid()
        .args([
            "report",
            "run",
            out.to_str().unwrap(),
            "-o",
            html.to_str().unwrap(),
        ])
        .output()
        .unwrap();
    ok(&o, "turbid report run (thickener)");
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(page.contains("id=\"thickener-transients\""));
    assert!(page.contains("final underflow"));
    // Underflow and blanket predictions are design outputs: the caution.
    assert!(page.contains("id=\"caution\"") && page.contains("licensed engineer"));
    assert_self_contained(&page);
    let _ = std::fs::remove_dir_all(&dir);
}

/// No scripts, links, images or fonts from elsewhere: the only URL allowed
/// is the SVG namespace name, which is an identifier, not fetched.
fn assert_self_contained(page: &str) {
    let stripped = page.replace("http://www.w3.org/2000/svg", "");
    for bad in ["http://", "https://", "<script", "<link", "@import", "url("] {
        assert!(
            !stripped.contains(bad),
            "report refers to something outside: {bad}"
        );
    }
}

#[test]
fn curve_and_size_print_the_library_numbers() {
    let dir = temp_dir("design-size");
    let (h5, lab) = continuum_run(&dir);
    let lab_s = lab.to_str().unwrap();

    // turbid curve on the lab CSV: the Kynch table is the library's.
    let o = turbid()
        .args([
            "curve",
            lab_s,
            "--height",
            HEIGHT,
            "--loading",
            LOADING,
            "--json",
        ])
        .output()
        .unwrap();
    ok(&o, "turbid curve --json");
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let curve = SettlingCurve::from_csv_path(&lab, 0.2, 250.0).unwrap();
    let k = kynch(&curve, Smoothing::default(), None).unwrap();
    let points = j["kynch"].as_array().unwrap();
    assert_eq!(points.len(), k.points.len());
    // Equal up to the decimal round trip through JSON (serde_json's
    // default float parser is not correctly rounded in the last bit).
    let same = |a: f64, b: f64| (a - b).abs() <= 1e-14 * b.abs();
    for (p, q) in points.iter().zip(&k.points) {
        assert!(same(p["flux"].as_f64().unwrap(), q.flux), "{p} vs {q:?}");
        assert!(same(p["concentration"].as_f64().unwrap(), q.concentration));
    }
    // The same curve from the result file: the same readings, SI.
    let o = turbid()
        .args(["curve", h5.to_str().unwrap()])
        .output()
        .unwrap();
    ok(&o, "turbid curve on a result file");
    let t = text(&o.stdout);
    assert!(
        t.contains("Kynch construction") && t.contains("initial solids  250.0"),
        "{t}"
    );

    // turbid size: Yoshioka and Coe–Clevenger as the library gives them.
    let feed = ["--feed", "20 t/h", "--feed-concentration", "250 g/L"];
    let under = ["--underflow", "900 g/L"];
    let o = turbid()
        .args([
            "size",
            "--curve",
            lab_s,
            "--height",
            HEIGHT,
            "--loading",
            LOADING,
        ])
        .args(feed)
        .args(under)
        .args([
            "--tank-area",
            "600 m²",
            "--underflow-flow",
            "20 m³/h",
            "--json",
        ])
        .output()
        .unwrap();
    ok(&o, "turbid size --json");
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let flux = BatchFluxCurve::from_kynch(&k).unwrap();
    let basis = DesignBasis {
        feed_solids: 20.0 / 3.6,
        feed_concentration: 250.0,
        underflow_concentration: 900.0,
    };
    let expected = [
        yoshioka(&flux, &basis).unwrap(),
        coe_clevenger(&flux, &basis).unwrap(),
    ];
    let areas = j["areas"].as_array().unwrap();
    for e in &expected {
        let method = serde_json::to_value(e.method).unwrap();
        let got = areas
            .iter()
            .find(|a| a["method"] == method)
            .unwrap_or_else(|| panic!("no {method} area in {areas:?}"));
        let rel = (got["area"].as_f64().unwrap() - e.area).abs() / e.area;
        assert!(
            rel < 1e-12,
            "{method}: {} vs library {}",
            got["area"],
            e.area
        );
    }
    // The state point: applied flux Q_f C_f / A with Q_f = feed / C_f, so
    // the feed solids over the area (definition, sizing::StatePoint).
    let sp = &j["state_point"];
    let applied = sp["applied_flux"].as_f64().unwrap();
    assert!((applied - 20.0 / 3.6 / 600.0).abs() < 1e-12, "{applied}");
    assert!(sp["verdict"].is_string());
    assert!(j["caution"].as_str().unwrap().contains("licensed engineer"));

    // The text output carries the units and the caution.
    let o = turbid()
        .args([
            "size",
            "--curve",
            lab_s,
            "--height",
            HEIGHT,
            "--loading",
            LOADING,
        ])
        .args(feed)
        .args(under)
        .args(["--plots", dir.join("size-plots").to_str().unwrap()])
        .output()
        .unwrap();
    ok(&o, "turbid size");
    let t = text(&o.stdout);
    for needle in [
        "[m²·d/t]",
        "area [m²]",
        "t/h",
        "g/L",
        "licensed engineer",
        "Talmage-Fitch",
    ] {
        assert!(t.contains(needle), "`{needle}` missing from:\n{t}");
    }
    check_plot(&dir.join("size-plots"), "flux-curve", 0.02);
    check_plot(&dir.join("size-plots"), "settling-curve", 0.02);

    // The report of a sizing: caution box, key numbers, plots inline.
    let html = dir.join("size.html");
    let o = turbid()
        .args(["report", "size", "--curve", lab_s, "--height", HEIGHT])
        .args(["--loading", LOADING])
        .args(feed)
        .args(under)
        .args(["--tank-area", "600 m²", "--underflow-flow", "20 m³/h"])
        .args(["-o", html.to_str().unwrap()])
        .output()
        .unwrap();
    ok(&o, "turbid report size");
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(page.contains("id=\"caution\"") && page.contains("licensed engineer"));
    assert!(page.contains("state point"));
    assert_eq!(page.matches("<svg").count(), 2);
    assert_self_contained(&page);
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn fit_prints_the_library_fit() {
    let dir = temp_dir("design-fit");
    let (_, lab) = continuum_run(&dir);
    let scenario = dir.join("column.yaml");
    let o = turbid()
        .args([
            "fit",
            scenario.to_str().unwrap(),
            "--curve",
            lab.to_str().unwrap(),
        ])
        .args([
            "--height",
            HEIGHT,
            "--loading",
            LOADING,
            "--law",
            "richardson-zaki",
        ])
        .args(["--cells", "40", "--json"])
        .output()
        .unwrap();
    ok(&o, "turbid fit --json");
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    // The library on the same input and options.
    let setup = turbid_engine::scenario::load(&scenario).unwrap();
    let curve = SettlingCurve::from_csv_path(&lab, 0.2, 250.0).unwrap();
    let options = turbid_engine::analysis::fit::FitOptions {
        cells: 40,
        ..Default::default()
    };
    let r = turbid_engine::analysis::fit::fit(
        &setup,
        turbid_engine::analysis::fit::LawToFit::RichardsonZaki,
        &[curve],
        &options,
    )
    .unwrap();
    let params = j["parameters"].as_array().unwrap();
    // Equal up to the decimal round trip through JSON (see above).
    let same = |a: f64, b: f64| (a - b).abs() <= 1e-14 * b.abs();
    assert_eq!(params.len(), 2);
    for (p, q) in params.iter().zip(&r.parameters) {
        assert_eq!(p["name"].as_str().unwrap(), q.name);
        assert!(same(p["value"].as_f64().unwrap(), q.value), "{p} vs {q:?}");
        assert!(same(p["lower"].as_f64().unwrap(), q.lower));
        assert!(same(p["upper"].as_f64().unwrap(), q.upper));
    }
    assert_eq!(j["scenario_snippet"].as_str().unwrap(), r.scenario_snippet);
    // The text form: estimates with intervals, the snippet, the caution.
    let o = turbid()
        .args([
            "fit",
            scenario.to_str().unwrap(),
            "--curve",
            lab.to_str().unwrap(),
        ])
        .args([
            "--height",
            HEIGHT,
            "--loading",
            LOADING,
            "--law",
            "richardson-zaki",
        ])
        .args([
            "--cells",
            "40",
            "--plots",
            dir.join("fit-plots").to_str().unwrap(),
        ])
        .output()
        .unwrap();
    ok(&o, "turbid fit");
    let t = text(&o.stdout);
    for needle in [
        "v_inf",
        "m/h",
        "95 % interval",
        "models:",
        "licensed engineer",
    ] {
        assert!(t.contains(needle), "`{needle}` missing from:\n{t}");
    }
    check_plot(&dir.join("fit-plots"), "settling-curve", 0.02);
    let _ = std::fs::remove_dir_all(&dir);
}

/// Run and expect exit 2 with every needle in stderr.
fn refused(args: &[&str], needles: &[&str]) {
    let o = turbid().args(args).output().unwrap();
    let err = text(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
    for n in needles {
        assert!(err.contains(n), "{args:?}: `{n}` missing from: {err}");
    }
    assert!(
        !err.contains("panicked") && !err.contains("internal error"),
        "{err}"
    );
}

#[test]
fn bad_input_to_the_design_commands_exits_2_with_a_located_message() {
    let dir = temp_dir("design-errors");
    let lab = dir.join("lab.csv");
    write(
        &lab,
        "# invented\ntime [min],height [mm]\n0,350\n1,330\n2,oops\n3,290\n",
    );
    let l = lab.to_str().unwrap();
    // A CSV without its initial height.
    refused(
        &["curve", l, "--loading", "60 g/L"],
        &["--height", "lab.csv"],
    );
    // A bad cell: file, line and column.
    refused(
        &["curve", l, "--height", "0.35 m", "--loading", "60 g/L"],
        &["lab.csv:5:2"],
    );
    // A unit of the wrong kind, and a bare number.
    refused(
        &[
            "size",
            "--curve",
            l,
            "--height",
            "0.35 m",
            "--loading",
            "60 g/L",
            "--feed",
            "50 kg",
            "--feed-concentration",
            "60 g/L",
            "--underflow",
            "600 g/L",
        ],
        &["--feed \"50 kg\""],
    );
    refused(
        &["curve", l, "--height", "0.35", "--loading", "60 g/L"],
        &["--height \"0.35\""],
    );
    // A missing file, a file that is not a result file.
    refused(
        &["plot", dir.join("none.h5").to_str().unwrap()],
        &["none.h5"],
    );
    refused(
        &[
            "report",
            "run",
            l,
            "-o",
            dir.join("r.html").to_str().unwrap(),
        ],
        &["lab.csv"],
    );
    // An area without its unit.
    let good = dir.join("good.csv");
    let mut rows = String::from("time [min],height [mm]\n");
    // Falling at 10 mm/min, then bending over towards 120 mm.
    for i in 0..30 {
        let h = (350.0 - 10.0 * i as f64).max(120.0 + 60.0 * (-(i as f64 - 17.0) / 4.0).exp());
        rows.push_str(&format!("{i},{h}\n"));
    }
    write(&good, &rows);
    refused(
        &[
            "size",
            "--curve",
            good.to_str().unwrap(),
            "--height",
            "0.35 m",
            "--loading",
            "60 g/L",
            "--feed",
            "50 t/h",
            "--feed-concentration",
            "60 g/L",
            "--underflow",
            "600 g/L",
            "--tank-area",
            "450",
            "--underflow-flow",
            "80 m³/h",
        ],
        &["--tank-area \"450\"", "m²"],
    );
    // Fit: too few readings for two parameters, and unequal flag counts.
    let few = dir.join("few.csv");
    write(&few, "time [min],height [mm]\n0,350\n1,330\n2,310\n3,290\n");
    let scenario = dir.join("base.yaml");
    write(&scenario, &base(1000));
    let s = scenario.to_str().unwrap();
    refused(
        &[
            "fit",
            s,
            "--curve",
            few.to_str().unwrap(),
            "--height",
            "0.35 m",
            "--loading",
            "60 g/L",
            "--law",
            "vesilind",
        ],
        &["at least 8"],
    );
    refused(
        &[
            "fit",
            s,
            "--curve",
            l,
            "--curve",
            l,
            "--curve",
            l,
            "--height",
            "0.35 m",
            "--height",
            "0.3 m",
            "--loading",
            "60 g/L",
            "--law",
            "vesilind",
        ],
        &["2 values of --height for 3 curves"],
    );
    refused(
        &[
            "fit",
            s,
            "--curve",
            l,
            "--height",
            "0.35 m",
            "--loading",
            "60 g/L",
            "--law",
            "takacs",
        ],
        &["--v0-max"],
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn size_from_a_scenario_law_matches_the_library() {
    // The invented municipal thickener's Vesilind sludge (v0 = 8 m/h,
    // k = 0.5 L/g) as the flux curve; a tank of 452 m² with 160 m³/h
    // underflow and 2 t/h at 3.5 g/L.
    let scenario = repo().join("scenarios/municipal-thickener.yaml");
    let o = turbid()
        .args(["size", "--scenario", scenario.to_str().unwrap()])
        .args([
            "--feed",
            "2 t/h",
            "--feed-concentration",
            "3.5 g/L",
            "--underflow",
            "10 g/L",
        ])
        .args([
            "--tank-area",
            "452 m²",
            "--underflow-flow",
            "160 m³/h",
            "--json",
        ])
        .output()
        .unwrap();
    ok(&o, "turbid size --scenario");
    let j: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let setup = turbid_engine::scenario::load(&scenario).unwrap();
    let class = &setup.classes[0];
    let flux = BatchFluxCurve::law(
        setup.hindered_law(class),
        class.terminal.velocity,
        setup.max_packing,
        setup.species[class.species].density,
    );
    let basis = DesignBasis {
        feed_solids: 2.0 / 3.6,
        feed_concentration: 3.5,
        underflow_concentration: 10.0,
    };
    let expected = yoshioka(&flux, &basis).unwrap();
    let got = j["areas"][0]["area"].as_f64().unwrap();
    assert!(
        (got - expected.area).abs() <= 1e-12 * expected.area,
        "{got} vs {}",
        expected.area
    );
    let tank = turbid_engine::analysis::sizing::TankOperation {
        area: 452.0,
        feed_flow: 2.0 / 3.6 / 3.5,
        underflow_flow: 160.0 / 3600.0,
        feed_concentration: 3.5,
    };
    let sp = turbid_engine::analysis::sizing::state_point(&flux, &tank, 0.02).unwrap();
    assert_eq!(
        j["state_point"]["verdict"],
        serde_json::to_value(sp.verdict).unwrap()
    );
    // Only the flux methods: a law has no settling curve.
    assert_eq!(j["areas"].as_array().unwrap().len(), 2);
    // A scenario with several size classes is refused.
    let o = turbid()
        .args(["size", "--scenario"])
        .arg(repo().join("scenarios/copper-tailings-slurry.yaml"))
        .args([
            "--feed",
            "2 t/h",
            "--feed-concentration",
            "3.5 g/L",
            "--underflow",
            "10 g/L",
        ])
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(
        text(&o.stderr).contains("one size class"),
        "{}",
        text(&o.stderr)
    );
}
