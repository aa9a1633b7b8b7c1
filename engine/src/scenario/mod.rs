//! The scenario file: what the user describes, checked and turned into SI
//! inputs for the engines.
//!
//! Reading goes in three steps, each with located messages:
//! 1. YAML syntax and structure (serde), with the nearest valid key as a hint;
//! 2. physical checks on the values ([`resolve`]), located through the key path;
//! 3. the single-particle data every engine needs (terminal velocities, exponents).

pub mod distribution;
pub mod error;
pub mod locate;
pub mod resolve;
pub mod spec;
pub mod units;

pub use error::{ErrorKind, Problem, ScenarioError};
pub use resolve::Setup;
pub use spec::ScenarioSpec;

use std::path::Path;

/// Read and check a scenario file.
pub fn load(path: &Path) -> Result<Setup, ScenarioError> {
    let text = std::fs::read_to_string(path).map_err(|e| {
        ScenarioError::new(
            path,
            ErrorKind::Io,
            vec![Problem {
                key: String::new(),
                message: format!("cannot read the scenario file: {e}"),
                hint: Some("check the path and the file's permissions".into()),
                line: None,
                column: None,
            }],
        )
    })?;
    parse_str(&text, path)
}

/// The format version this build reads.
pub const FORMAT: u64 = 1;

/// Parse the YAML structure only (step 1).
pub fn parse_spec(text: &str, path: &Path) -> Result<ScenarioSpec, ScenarioError> {
    // A file of another format version would fail on keys it does not share
    // with format 1; say what is really wrong first.
    if let Ok(serde_yaml::Value::Mapping(m)) = serde_yaml::from_str::<serde_yaml::Value>(text)
        && let Some(v) = m.get("format")
        && v.as_u64() != Some(FORMAT)
    {
        let (line, column) = locate::Locations::scan(text).find("format").unzip();
        return Err(ScenarioError::new(
            path,
            ErrorKind::Invalid,
            vec![Problem {
                key: "format".into(),
                message: format!("scenario format {} is not known to this build", render(v)),
                hint: Some(format!("this build of turbid reads `format: {FORMAT}`")),
                line,
                column,
            }],
        ));
    }
    let de = serde_yaml::Deserializer::from_str(text);
    serde_yaml::with::singleton_map_recursive::deserialize(de).map_err(|e| {
        let (kind, problem) = error::from_yaml_error(&e);
        ScenarioError::new(path, kind, vec![problem])
    })
}

/// Check scenario text; `path` is used in messages.
pub fn parse_str(text: &str, path: &Path) -> Result<Setup, ScenarioError> {
    let spec = parse_spec(text, path)?;
    let locs = locate::Locations::scan(text);
    resolve::resolve(&spec, &locs).map_err(|p| ScenarioError::new(path, ErrorKind::Invalid, p))
}

/// JSON Schema (draft-07, which most editors understand) of the scenario format.
pub fn json_schema() -> serde_json::Value {
    let schema = schemars::generate::SchemaSettings::draft07()
        .into_generator()
        .into_root_schema_for::<ScenarioSpec>();
    serde_json::to_value(schema).expect("a schema is plain JSON")
}

fn render(v: &serde_yaml::Value) -> String {
    serde_yaml::to_string(v).map_or_else(|_| "?".into(), |t| t.trim().to_string())
}
