//! The continuous-thickener keys of the scenario format: what a valid file
//! resolves to, and bad input refused with the file, line, column, key path
//! and a hint (same style as `scenario_errors.rs`: one defect injected into
//! the invented example, its position found in the text itself).

use std::path::Path;
use turbid_engine::operation::{Schedule, Underflow};
use turbid_engine::scenario::{self, Problem};

const BASE: &str = include_str!("../../scenarios/municipal-thickener.yaml");

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

fn refuse(text: &str) -> Vec<Problem> {
    match scenario::parse_str(text, Path::new("tank.yaml")) {
        Ok(_) => panic!("scenario was accepted:\n{text}"),
        Err(e) => {
            assert!(e.to_string().starts_with("error: tank.yaml:"), "{e}");
            e.problems
        }
    }
}

#[test]
fn the_example_resolves_to_its_flows() {
    let s = scenario::parse_str(BASE, Path::new("tank.yaml")).unwrap();
    let op = s.thickener.as_ref().expect("a thickener");
    // Round tank of 24 m: A = π 12² m² (exact geometry).
    assert!((s.column.area - std::f64::consts::PI * 144.0).abs() < 1e-9);
    assert_eq!(s.column.height, 4.0);
    assert_eq!(op.feed_level, 2.5);
    // Ramp 500 → 800 m³/h over 4–6 h: halfway 650 m³/h (linear interpolation).
    assert!((op.at(5.0 * 3600.0).feed_flow * 3600.0 - 650.0).abs() < 1e-9);
    assert_eq!(
        op.feed_flow,
        Schedule::Table(vec![
            (4.0 * 3600.0, 500.0 / 3600.0),
            (6.0 * 3600.0, 800.0 / 3600.0)
        ])
    );
    // Underflow steps 160 → 300 m³/h at 7 h; Q_e = Q_f − Q_u.
    assert!(matches!(op.underflow, Underflow::Flow(Schedule::Steps(_))));
    let p = op.at(8.0 * 3600.0);
    assert!((p.underflow_flow * 3600.0 - 300.0).abs() < 1e-9);
    assert!((p.overflow_flow * 3600.0 - 500.0).abs() < 1e-9);
    // q_u = Q_u/A below the feed, −q_e above (Bürger–Diehl bulk velocity).
    let qu = 300.0 / 3600.0 / s.column.area;
    assert!((op.bulk_velocity(8.0 * 3600.0, 1.0) - qu).abs() < 1e-15);
    assert!((op.bulk_velocity(8.0 * 3600.0, 3.0) + 500.0 / 3600.0 / s.column.area).abs() < 1e-15);
    // 3.5 g/L over a solid density of 1450 kg/m³.
    assert!((op.feed_solids.at(0.0) - 3.5 / 1450.0).abs() < 1e-15);
    // The tank starts with clear water (no `initial`).
    assert_eq!(s.initial_volume_fraction, 0.0);
    // Schedule changes at 4, 6 and 7 h.
    assert_eq!(op.next_change(0.0), Some(4.0 * 3600.0));
    assert_eq!(op.next_change(6.0 * 3600.0), Some(7.0 * 3600.0));
}

#[test]
fn feed_level_above_the_lip_is_refused() {
    let (text, line, col) = inject("feed_level: \"2.5 m\"", "feed_level: \"4.5 m\"");
    let p = refuse(&text);
    assert_eq!(p[0].key, "vessel.thickener.feed_level");
    assert!(p[0].message.contains("inside the vessel"), "{:?}", p[0]);
    assert!(p[0].hint.is_some());
    assert_eq!(
        (p[0].line, p[0].column),
        (Some(line), Some(col + "feed_level: ".len()))
    );
}

#[test]
fn underflow_not_below_the_feed_is_refused() {
    // The feed is 800 m³/h from 6 h on: a step to 790 m³/h at 7 h passes,
    // one to 800 m³/h (nothing over the lip) does not.
    let (text, _, _) = inject("value: \"300 m³/h\"", "value: \"790 m³/h\"");
    assert!(scenario::parse_str(&text, Path::new("t.yaml")).is_ok());
    let (text, _, _) = inject("value: \"300 m³/h\"", "value: \"800 m³/h\"");
    let p = refuse(&text);
    assert_eq!(p[0].key, "operation.underflow.flow");
    assert!(
        p[0].message.contains("not less than the feed"),
        "{:?}",
        p[0]
    );
    assert!(p[0].message.contains("t = 7.0000 h"), "{:?}", p[0]);
}

#[test]
fn schedule_times_must_increase() {
    let (text, line, col) = inject("at: \"7 h\"", "at: \"0 min\"");
    let p = refuse(&text);
    assert_eq!(p[0].key, "operation.underflow.flow.steps[1].at");
    assert!(p[0].message.contains("must increase"), "{:?}", p[0]);
    assert_eq!(
        (p[0].line, p[0].column),
        (Some(line), Some(col + "at: ".len()))
    );
}

#[test]
fn negative_flows_and_backward_ramps_are_refused() {
    let (text, line, _) = inject("from: \"500 m³/h\"", "from: \"-500 m³/h\"");
    let p = refuse(&text);
    assert_eq!(p[0].key, "operation.feed_flow.ramp.from");
    assert!(p[0].message.contains("cannot be negative"), "{:?}", p[0]);
    assert_eq!(p[0].line, Some(line));
    let (text, _, _) = inject("end: \"6 h\"", "end: \"3 h\"");
    let p = refuse(&text);
    assert_eq!(p[0].key, "operation.feed_flow.ramp.end");
    assert!(p[0].hint.as_deref().unwrap().contains("steps"));
}

#[test]
fn underflow_ratio_must_be_a_part_of_the_feed() {
    let under = "underflow:\n    flow:\n      steps:\n        - { at: \"0 h\", value: \"160 m³/h\" }\n        - { at: \"7 h\", value: \"300 m³/h\" }";
    let (text, line, _) = inject(under, "underflow: { ratio: 1.2 }");
    let p = refuse(&text);
    assert_eq!(p[0].key, "operation.underflow.ratio");
    assert!(p[0].message.contains("[0, 1)"), "{:?}", p[0]);
    assert_eq!(p[0].line, Some(line));
    // A valid ratio resolves: Q_u = 0.4 Q_f.
    let (text, _, _) = inject(under, "underflow: { ratio: 0.4 }");
    let s = scenario::parse_str(&text, Path::new("t.yaml")).unwrap();
    let p = s.thickener.unwrap().at(0.0);
    assert!((p.underflow_flow - 0.4 * p.feed_flow).abs() < 1e-15);
}

#[test]
fn misspelt_operation_keys_get_a_hint() {
    let (text, line, _) = inject("feed_solids:", "feed_solid:");
    let p = refuse(&text);
    assert!(
        p[0].message.contains("unknown field `feed_solid`"),
        "{:?}",
        p[0]
    );
    assert_eq!(p[0].hint.as_deref(), Some("did you mean `feed_solids`?"));
    assert_eq!(p[0].line, Some(line));
    let (text, _, _) = inject("ramp:", "rampe:");
    let p = refuse(&text);
    assert!(
        p[0].message.contains("unknown variant `rampe`"),
        "{:?}",
        p[0]
    );
    assert_eq!(p[0].hint.as_deref(), Some("did you mean `ramp`?"));
}

#[test]
fn ambiguous_feed_percentage_is_refused() {
    let (text, line, _) = inject("feed_solids: \"3.5 g/L\"", "feed_solids: \"3 %\"");
    let p = refuse(&text);
    assert!(p[0].message.contains("ambiguous"), "{:?}", p[0]);
    assert_eq!(p[0].line, Some(line));
}

#[test]
fn operation_and_vessel_must_match() {
    // A thickener without `operation`.
    let start = BASE.find("operation:").unwrap();
    let end = BASE.find("models:").unwrap();
    let text = format!("{}{}", &BASE[..start], &BASE[end..]);
    let p = refuse(&text);
    assert_eq!(p[0].key, "vessel.thickener");
    assert!(p[0].hint.as_deref().unwrap().contains("operation"));
    // A batch column with `operation`.
    let column = include_str!("../../scenarios/glass-beads-column.yaml");
    let text = format!(
        "{column}\noperation: {{ feed_flow: \"1 L/s\", feed_solids: \"1 g/L\", underflow: {{ ratio: 0.5 }} }}\n"
    );
    let p = refuse(&text);
    assert_eq!(p[0].key, "operation");
    let line = text
        .lines()
        .position(|l| l.starts_with("operation:"))
        .unwrap()
        + 1;
    assert_eq!(p[0].line, Some(line));
}

#[test]
fn a_plain_area_is_accepted() {
    let (text, _, _) = inject(
        "cross_section: { round: { diameter: \"24 m\" } }",
        "cross_section: { area: \"0.03 ha\" }",
    );
    let s = scenario::parse_str(&text, Path::new("t.yaml")).unwrap();
    assert!((s.column.area - 300.0).abs() < 1e-9); // 1 ha = 10⁴ m² (SI brochure)
    let (text, line, _) = inject(
        "cross_section: { round: { diameter: \"24 m\" } }",
        "cross_section: { area: \"-300 m²\" }",
    );
    let p = refuse(&text);
    assert_eq!(p[0].key, "vessel.thickener.cross_section.area");
    assert_eq!(p[0].line, Some(line));
}
