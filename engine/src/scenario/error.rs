//! Problems found in a scenario file, each located by line, column and key path,
//! with a hint on how to fix it.

use std::fmt;
use std::path::{Path, PathBuf};

/// Why the scenario was refused.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ErrorKind {
    /// The file could not be read.
    Io,
    /// The text is not valid YAML.
    Syntax,
    /// Valid YAML, but a key, type or value is wrong or unphysical.
    Invalid,
}

/// One located problem.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// Key path such as `solids[0].size.log_normal.median`; empty for the whole file.
    pub key: String,
    /// What is wrong and what was expected.
    pub message: String,
    /// How to fix it.
    pub hint: Option<String>,
    /// 1-based line and column, where known.
    pub line: Option<usize>,
    pub column: Option<usize>,
}

/// A scenario that cannot be run, with every problem found.
#[derive(Debug, Clone)]
pub struct ScenarioError {
    pub file: PathBuf,
    pub kind: ErrorKind,
    pub problems: Vec<Problem>,
}

impl ScenarioError {
    pub fn new(file: &Path, kind: ErrorKind, problems: Vec<Problem>) -> Self {
        ScenarioError {
            file: file.to_path_buf(),
            kind,
            problems,
        }
    }
}

impl fmt::Display for ScenarioError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, p) in self.problems.iter().enumerate() {
            if i > 0 {
                writeln!(f)?;
            }
            write!(f, "error: {}", self.file.display())?;
            if let Some(line) = p.line {
                write!(f, ":{line}")?;
                if let Some(col) = p.column {
                    write!(f, ":{col}")?;
                }
            }
            if p.key.is_empty() {
                write!(f, ": {}", p.message)?;
            } else {
                write!(f, ": `{}`: {}", p.key, p.message)?;
            }
            if let Some(h) = &p.hint {
                write!(f, "\n  hint: {h}")?;
            }
        }
        Ok(())
    }
}

impl std::error::Error for ScenarioError {}

/// Turn a serde_yaml error into a located problem with a hint.
pub(crate) fn from_yaml_error(err: &serde_yaml::Error) -> (ErrorKind, Problem) {
    let (line, column) = match err.location() {
        Some(l) => (Some(l.line()), Some(l.column())),
        None => (None, None),
    };
    let mut text = err.to_string();
    if let Some(i) = text.rfind(" at line ") {
        text.truncate(i);
    }
    // serde_yaml writes "path.to.key: message" when it knows the path.
    let (key, message) = match text.split_once(": ") {
        Some((k, m)) if looks_like_key_path(k) => (k.to_string(), m.to_string()),
        _ => (String::new(), text.clone()),
    };
    let syntax = is_syntax_message(&message);
    let hint = if syntax {
        Some("check the indentation (spaces, not tabs), that each key ends with `:` and that quotes are closed".to_string())
    } else {
        hint_for(&message)
    };
    let kind = if syntax {
        ErrorKind::Syntax
    } else {
        ErrorKind::Invalid
    };
    (
        kind,
        Problem {
            key,
            message,
            hint,
            line,
            column,
        },
    )
}

fn looks_like_key_path(s: &str) -> bool {
    !s.is_empty()
        && s.chars()
            .all(|c| c.is_ascii_alphanumeric() || "_.[]".contains(c))
}

fn is_syntax_message(m: &str) -> bool {
    [
        "did not find expected",
        "while parsing",
        "while scanning",
        "mapping values are not allowed",
        "found character that cannot start",
        "found unexpected end of stream",
        "control characters are not allowed",
    ]
    .iter()
    .any(|s| m.contains(s))
}

/// Names between backticks after `expected`, as serde lists valid keys and variants.
fn expected_names(message: &str) -> Vec<String> {
    let Some(i) = message.find("expected") else {
        return Vec::new();
    };
    message[i..]
        .split('`')
        .skip(1)
        .step_by(2)
        .map(str::to_string)
        .collect()
}

fn backticked_after(message: &str, prefix: &str) -> Option<String> {
    let rest = &message[message.find(prefix)? + prefix.len()..];
    let rest = rest.strip_prefix('`')?;
    Some(rest[..rest.find('`')?].to_string())
}

/// The valid name closest to `given`, if it is plausibly a typo of it.
pub fn nearest<'a>(given: &str, valid: &'a [String]) -> Option<&'a str> {
    let given_l = given.to_lowercase();
    valid
        .iter()
        .map(|v| (strsim::damerau_levenshtein(&given_l, &v.to_lowercase()), v))
        .filter(|(d, v)| *d <= (v.chars().count() / 3).max(2))
        .min_by_key(|(d, _)| *d)
        .map(|(_, v)| v.as_str())
}

fn hint_for(message: &str) -> Option<String> {
    for (prefix, what) in [("unknown field ", "keys"), ("unknown variant ", "choices")] {
        if let Some(given) = backticked_after(message, prefix) {
            let valid = expected_names(message);
            return Some(match nearest(&given, &valid) {
                Some(best) => format!("did you mean `{best}`?"),
                None if valid.is_empty() => "this mapping takes no keys".to_string(),
                None => format!("valid {what} here: {}", valid.join(", ")),
            });
        }
    }
    if let Some(field) = backticked_after(message, "missing field ") {
        return Some(format!(
            "add `{field}:` to this mapping (`turbid schema` lists every key)"
        ));
    }
    if message.starts_with("invalid type") {
        if message.ends_with("expected u32") || message.ends_with("expected u64") {
            return Some("write a whole number without quotes, e.g. 20000".to_string());
        }
        if message.ends_with("expected f64") {
            return Some("write a plain number without quotes or units, e.g. 1.4".to_string());
        }
        if message.contains("expected a sequence") {
            return Some("write a list, one item per line starting with `- `".to_string());
        }
        if message.contains("expected struct") || message.contains("expected map") {
            return Some(
                "write a mapping of `key: value` lines indented under this key".to_string(),
            );
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nearest_key_for_typical_typos() {
        let valid: Vec<String> = ["median", "geometric_sd"]
            .iter()
            .map(|s| s.to_string())
            .collect();
        assert_eq!(nearest("medain", &valid), Some("median"));
        assert_eq!(nearest("geometric_std", &valid), Some("geometric_sd"));
        assert_eq!(nearest("colour", &valid), None);
    }

    #[test]
    fn expected_names_are_parsed_from_serde_messages() {
        let m = "unknown field `hieght`, expected `height` or `cross_section`";
        assert_eq!(expected_names(m), vec!["height", "cross_section"]);
        assert_eq!(hint_for(m).unwrap(), "did you mean `height`?");
        let m = "unknown variant `rz`, expected one of `richardson_zaki`, `michaels_bolger`, `vesilind`";
        assert_eq!(
            hint_for(m).unwrap(),
            "valid choices here: richardson_zaki, michaels_bolger, vesilind"
        );
    }
}
