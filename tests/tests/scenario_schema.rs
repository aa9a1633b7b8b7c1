//! The JSON Schema printed by `turbid schema` describes the scenario format:
//! every example scenario validates against it, a broken one does not, and
//! the copy committed at the repository root is current.

use std::path::{Path, PathBuf};
use turbid_engine::scenario;

fn repo_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .parent()
        .unwrap()
        .to_path_buf()
}

fn scenario_files() -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(repo_root().join("scenarios"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|x| x == "yaml"))
        .collect();
    files.sort();
    assert!(files.len() >= 2, "expected example scenarios in scenarios/");
    files
}

fn yaml_as_json(path: &Path) -> serde_json::Value {
    let text = std::fs::read_to_string(path).unwrap();
    serde_yaml::from_str(&text).unwrap()
}

#[test]
fn every_example_scenario_validates_against_the_schema() {
    let schema = scenario::json_schema();
    let validator = jsonschema::validator_for(&schema).expect("the schema itself is valid");
    for file in scenario_files() {
        let doc = yaml_as_json(&file);
        let errors: Vec<String> = validator.iter_errors(&doc).map(|e| e.to_string()).collect();
        assert!(errors.is_empty(), "{}: {errors:#?}", file.display());
        // And the engine accepts it too.
        scenario::load(&file).unwrap_or_else(|e| panic!("{e}"));
    }
}

#[test]
fn the_schema_rejects_what_the_parser_rejects() {
    let schema = scenario::json_schema();
    let validator = jsonschema::validator_for(&schema).unwrap();
    let good = yaml_as_json(&scenario_files()[0]);
    assert!(validator.is_valid(&good));
    type Mutation = fn(&mut serde_json::Value);
    let cases: [(&str, Mutation); 4] = [
        ("misspelt key", |d| {
            let v = d["run"]["parcels"].take();
            d["run"].as_object_mut().unwrap().remove("parcels");
            d["run"]["parcel"] = v;
        }),
        ("bare number for a length", |d| {
            d["vessel"]["column"]["height"] = serde_json::json!(1.0);
        }),
        ("unknown unit", |d| {
            d["vessel"]["column"]["height"] = serde_json::json!("1.0 furlong");
        }),
        ("unknown drag law", |d| {
            d["models"]["drag"] = serde_json::json!("newton");
        }),
    ];
    for (what, mutate) in cases {
        let mut doc = good.clone();
        mutate(&mut doc);
        assert!(
            !validator.is_valid(&doc),
            "schema accepted a document with a {what}"
        );
        let text = serde_yaml::to_string(&doc).unwrap();
        assert!(
            scenario::parse_str(&text, Path::new("case.yaml")).is_err(),
            "parser accepted a document with a {what}"
        );
    }
}

#[test]
fn committed_schema_file_is_current() {
    let committed = std::fs::read_to_string(repo_root().join("scenario.schema.json"))
        .expect("scenario.schema.json at the repository root (write it with `turbid schema`)");
    let committed: serde_json::Value = serde_json::from_str(&committed).unwrap();
    assert_eq!(
        committed,
        scenario::json_schema(),
        "scenario.schema.json is stale: regenerate it with `cargo run -- schema > scenario.schema.json`"
    );
}
