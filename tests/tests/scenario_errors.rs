//! Bad input is refused with the file, line, column, key path, what was
//! expected and a hint. Each case takes a valid example scenario, injects one
//! defect, and checks that the message points at the line and column of the
//! defect (found in the text itself, not hard-coded).

use std::path::Path;
use turbid_engine::scenario::{self, ErrorKind, Problem};

const BASE: &str = include_str!("../../scenarios/glass-beads-column.yaml");

/// Replace `from` (which must occur once) and return the new text plus the
/// 1-based line and column where `to` starts.
fn inject(from: &str, to: &str) -> (String, usize, usize) {
    assert_eq!(
        BASE.matches(from).count(),
        1,
        "fixture: `{from}` must occur once"
    );
    let text = BASE.replacen(from, to, 1);
    let at = text.find(to).unwrap();
    let line = text[..at].matches('\n').count() + 1;
    let col = at - text[..at].rfind('\n').map_or(0, |i| i + 1) + 1;
    (text, line, col)
}

fn refuse(text: &str) -> (ErrorKind, Vec<Problem>) {
    match scenario::parse_str(text, Path::new("case.yaml")) {
        Ok(_) => panic!("scenario was accepted:\n{text}"),
        Err(e) => {
            // The rendered message names the file and position.
            let shown = e.to_string();
            assert!(shown.starts_with("error: case.yaml:"), "{shown}");
            (e.kind, e.problems)
        }
    }
}

#[test]
fn misspelt_key_names_the_nearest_valid_key() {
    let (text, line, col) = inject("height: \"1.0 m\"", "heigth: \"1.0 m\"");
    let (kind, p) = refuse(&text);
    assert_eq!(kind, ErrorKind::Invalid);
    assert_eq!(p[0].key, "vessel.column");
    assert!(
        p[0].message.contains("unknown field `heigth`"),
        "{:?}",
        p[0]
    );
    assert_eq!(p[0].hint.as_deref(), Some("did you mean `height`?"));
    assert_eq!((p[0].line, p[0].column), (Some(line), Some(col)));
}

#[test]
fn misspelt_choice_names_the_nearest_valid_choice() {
    let (text, line, _) = inject("drag: auto", "drag: clift_grace_weeber");
    let (_, p) = refuse(&text);
    assert_eq!(p[0].key, "models.drag");
    assert_eq!(
        p[0].hint.as_deref(),
        Some("did you mean `clift_grace_weber`?")
    );
    assert_eq!(p[0].line, Some(line));
}

#[test]
fn wrong_type_says_what_was_expected() {
    let (text, line, col) = inject("parcels: 20000", "parcels: lots");
    let (_, p) = refuse(&text);
    assert_eq!(p[0].key, "run.parcels");
    assert!(p[0].message.contains("expected u64"), "{:?}", p[0]);
    assert!(p[0].hint.as_deref().unwrap().contains("whole number"));
    assert_eq!(
        (p[0].line, p[0].column),
        (Some(line), Some(col + "parcels: ".len()))
    );
}

#[test]
fn missing_unit_is_refused_with_an_example() {
    let (text, line, _) = inject("height: \"1.0 m\"", "height: 1.0");
    let (_, p) = refuse(&text);
    assert_eq!(p[0].key, "vessel.column.height");
    assert!(p[0].message.contains("needs a unit"), "{:?}", p[0]);
    assert_eq!(p[0].line, Some(line));
}

#[test]
fn negative_size_is_refused_at_its_value() {
    let (text, line, col) = inject("\"98 µm\"", "\"-98 µm\"");
    let (_, p) = refuse(&text);
    assert_eq!(p[0].key, "solids[0].size.single");
    assert!(p[0].message.contains("must be positive"), "{:?}", p[0]);
    assert_eq!((p[0].line, p[0].column), (Some(line), Some(col)));
}

#[test]
fn loading_at_or_above_packing_is_refused() {
    let (text, line, col) = inject("\"10 vol%\"", "\"70 vol%\"");
    let (_, p) = refuse(&text);
    assert_eq!(p[0].key, "initial.loading");
    assert!(p[0].message.contains("maximum packing"), "{:?}", p[0]);
    assert!(p[0].hint.is_some());
    assert_eq!((p[0].line, p[0].column), (Some(line), Some(col)));
    // Exactly at the limit is refused too (max_packing is 0.62 in the fixture).
    let (text, _, _) = inject("\"10 vol%\"", "\"62 vol%\"");
    assert_eq!(refuse(&text).1[0].key, "initial.loading");
}

#[test]
fn particles_lighter_than_the_fluid_are_refused() {
    let (text, line, _) = inject("\"2500 kg/m³\"", "\"950 kg/m³\"");
    let (_, p) = refuse(&text);
    assert_eq!(p[0].key, "solids[0].density");
    assert!(
        p[0].message.contains("not denser than the fluid"),
        "{:?}",
        p[0]
    );
    assert_eq!(p[0].line, Some(line));
}

#[test]
fn temperature_outside_the_liquid_range_is_refused() {
    for t in ["\"120 °C\"", "\"-5 °C\""] {
        let (text, line, _) = inject("\"20 °C\"", t);
        let (_, p) = refuse(&text);
        assert_eq!(p[0].key, "fluid.water.temperature");
        assert!(p[0].message.contains("liquid range"), "{:?}", p[0]);
        assert_eq!(p[0].line, Some(line));
    }
}

#[test]
fn non_monotone_size_table_is_refused() {
    let table = "size:\n      cumulative_passing:\n        - { size: \"50 µm\", percent: 10 }\n        - { size: \"100 µm\", percent: 60 }\n        - { size: \"80 µm\", percent: 80 }\n        - { size: \"200 µm\", percent: 100 }\n    size_classes: 4";
    let (text, _, _) = inject("size: { single: \"98 µm\" }", table);
    let (_, p) = refuse(&text);
    assert_eq!(p[0].key, "solids[0].size.cumulative_passing[2].size");
    assert!(p[0].message.contains("not monotone"), "{:?}", p[0]);
    let line = text.lines().position(|l| l.contains("\"80 µm\"")).unwrap() + 1;
    assert_eq!(p[0].line, Some(line));
    // Percent passing that falls with size is refused too.
    let falling = table
        .replace("percent: 60", "percent: 90")
        .replace("\"80 µm\"", "\"150 µm\"");
    let (text, _, _) = inject("size: { single: \"98 µm\" }", &falling);
    let (_, p) = refuse(&text);
    assert_eq!(p[0].key, "solids[0].size.cumulative_passing[2].percent");
}

#[test]
fn yaml_syntax_error_is_located() {
    // A key indented deeper than its siblings breaks the block mapping.
    let (text, line, col) = inject(
        "  end_time: \"10 min\"\n  output_interval",
        "  end_time: \"10 min\"\n    output_interval",
    );
    let (kind, p) = refuse(&text);
    assert_eq!(kind, ErrorKind::Syntax);
    assert_eq!(
        (p[0].line, p[0].column),
        (Some(line + 1), Some(col + 4)),
        "{:?}",
        p[0]
    );
    assert!(p[0].hint.is_some());
}

#[test]
fn several_physical_problems_are_reported_together() {
    let text = BASE.replacen("\"2500 kg/m³\"", "\"-1 kg/m³\"", 1).replacen(
        "height: \"1.0 m\"",
        "height: \"-1.0 m\"",
        1,
    );
    let (_, p) = refuse(&text);
    let keys: Vec<&str> = p.iter().map(|p| p.key.as_str()).collect();
    assert!(keys.contains(&"solids[0].density"), "{keys:?}");
    assert!(keys.contains(&"vessel.column.height"), "{keys:?}");
}

#[test]
fn unknown_format_version_is_named_first() {
    // A file written for another format version is refused for its version,
    // at the `format` key, before any complaint about keys it lacks.
    let (text, line, col) = inject("format: 1", "format: 2");
    let (_, p) = refuse(&text);
    assert_eq!(p.len(), 1);
    assert_eq!(p[0].key, "format");
    assert!(p[0].message.contains("format 2"), "{:?}", p[0]);
    assert_eq!(
        (p[0].line, p[0].column),
        (Some(line), Some(col + "format: ".len()))
    );
    let (text, _, _) = inject("format: 1\n", "format: 2\nfluid_colour: blue\n");
    assert_eq!(refuse(&text).1[0].key, "format");
}

#[test]
fn parcels_are_required_by_the_particle_engine_only() {
    // Particle engine (the default) without `run.parcels`: refused at `run`.
    let (text, _, _) = inject("  parcels: 20000\n", "");
    let run_line = text.lines().position(|l| l == "run:").unwrap() + 1;
    let (kind, p) = refuse(&text);
    assert_eq!(kind, ErrorKind::Invalid);
    assert_eq!(p[0].key, "run.parcels");
    assert!(
        p[0].message.contains("needs the number of parcels"),
        "{:?}",
        p[0]
    );
    assert!(
        p[0].hint
            .as_deref()
            .unwrap_or("")
            .contains("engine: continuum")
    );
    // Located in the `run` mapping (its two remaining keys follow `run:`).
    assert!(
        p[0].line
            .is_some_and(|l| (run_line..=run_line + 3).contains(&l)),
        "{:?}",
        p[0]
    );
    // The continuum engine has no parcels: the same text with it is accepted.
    let continuum = text.replacen("run:\n", "run:\n  engine: continuum\n", 1);
    let setup = scenario::parse_str(&continuum, Path::new("case.yaml"))
        .unwrap_or_else(|e| panic!("continuum without parcels refused: {e}"));
    assert_eq!(setup.engine, scenario::resolve::EngineSpec::Continuum);
}
