//! Key paths into a scenario's YAML tree: `initial.loading`,
//! `solids.0.size.single` or `solids[0].size.single`.

use serde_yaml::Value;
use std::fmt;
use turbid_engine::scenario::error::nearest;

/// A parsed key path. Each segment is a mapping key or, where the tree holds
/// a list, an item index written as a number.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct KeyPath {
    segments: Vec<String>,
}

impl KeyPath {
    pub fn parse(text: &str) -> Result<KeyPath, String> {
        let mut segments = Vec::new();
        for part in text.trim().split('.') {
            let (name, mut rest) = match part.find('[') {
                Some(i) => (&part[..i], &part[i..]),
                None => (part, ""),
            };
            if name.is_empty() && (rest.is_empty() || segments.is_empty()) {
                return Err(format!(
                    "`{text}` is not a key path: write keys separated by dots, e.g. `initial.loading` or `solids.0.size.single`"
                ));
            }
            if !name.is_empty() {
                segments.push(name.to_string());
            }
            while let Some(r) = rest.strip_prefix('[') {
                let close = r
                    .find(']')
                    .ok_or_else(|| format!("`{text}`: `[` without `]`"))?;
                let idx = &r[..close];
                if idx.parse::<usize>().is_err() {
                    return Err(format!(
                        "`{text}`: `[{idx}]` is not a list index (a whole number from 0)"
                    ));
                }
                segments.push(idx.to_string());
                rest = &r[close + 1..];
            }
            if !rest.is_empty() {
                return Err(format!("`{text}`: unexpected `{rest}`"));
            }
        }
        Ok(KeyPath { segments })
    }

    /// The path as the scenario checks name keys: `solids[0].size.single`.
    /// Needs the tree to tell list indices from mapping keys made of digits.
    pub fn canonical(&self, tree: &Value) -> String {
        let mut out = String::new();
        let mut node = Some(tree);
        for seg in &self.segments {
            let is_index = matches!(node, Some(Value::Sequence(_)));
            if is_index {
                out.push_str(&format!("[{seg}]"));
            } else {
                if !out.is_empty() {
                    out.push('.');
                }
                out.push_str(seg);
            }
            node = node.and_then(|n| child(n, seg));
        }
        out
    }

    /// The value at this path, if the tree has it.
    pub fn get<'a>(&self, tree: &'a Value) -> Option<&'a Value> {
        self.segments.iter().try_fold(tree, |n, s| child(n, s))
    }

    /// Put `value` at this path. Every mapping and list on the way must exist
    /// in the tree; the last key may be new (a setting left at its default).
    pub fn set(&self, tree: &mut Value, value: Value) -> Result<(), String> {
        let n = self.segments.len();
        let mut node = tree;
        for (i, seg) in self.segments.iter().enumerate() {
            let last = i + 1 == n;
            let here = KeyPath {
                segments: self.segments[..i].to_vec(),
            };
            let shown = if i == 0 {
                "the top level".to_string()
            } else {
                format!("`{}`", here.segments.join("."))
            };
            node = match node {
                Value::Mapping(m) => {
                    let key = Value::String(seg.clone());
                    if last {
                        m.insert(key, value);
                        return Ok(());
                    }
                    if !m.contains_key(&key) {
                        let keys: Vec<String> = m
                            .keys()
                            .filter_map(|k| k.as_str().map(str::to_string))
                            .collect();
                        let hint = match nearest(seg, &keys) {
                            Some(best) => format!("did you mean `{best}`?"),
                            None => format!(
                                "keys there: {}; an optional section left out of the base scenario must be added to it first (e.g. `{seg}: {{}}`)",
                                keys.join(", ")
                            ),
                        };
                        let place = if i == 0 {
                            "at the top level".to_string()
                        } else {
                            format!("in {shown}")
                        };
                        return Err(format!("the base scenario has no `{seg}` {place}; {hint}"));
                    }
                    m.get_mut(&key).expect("checked above")
                }
                Value::Sequence(items) => {
                    let len = items.len();
                    let idx: usize = seg.parse().map_err(|_| {
                        format!("{shown} is a list in the base scenario: address its items by number (0, 1, …), not `{seg}`")
                    })?;
                    if idx >= len {
                        return Err(format!(
                            "{shown} has {len} item{} in the base scenario (numbered from 0), so there is no item {idx}",
                            if len == 1 { "" } else { "s" }
                        ));
                    }
                    if last {
                        items[idx] = value;
                        return Ok(());
                    }
                    &mut items[idx]
                }
                _ => {
                    return Err(format!(
                        "{shown} is a single value in the base scenario, so it has no `{seg}`"
                    ));
                }
            };
        }
        Err("an empty key path".into())
    }
}

fn child<'a>(node: &'a Value, seg: &str) -> Option<&'a Value> {
    match node {
        Value::Mapping(m) => m.get(seg),
        Value::Sequence(s) => s.get(seg.parse::<usize>().ok()?),
        _ => None,
    }
}

impl fmt::Display for KeyPath {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.segments.join("."))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tree() -> Value {
        serde_yaml::from_str(
            "solids:\n  - name: a\n    size: { single: \"5 µm\" }\ninitial: { loading: \"5 vol%\" }\nnumerics: {}\n",
        )
        .unwrap()
    }

    #[test]
    fn both_spellings_reach_the_same_value() {
        let t = tree();
        let a = KeyPath::parse("solids.0.size.single").unwrap();
        let b = KeyPath::parse("solids[0].size.single").unwrap();
        assert_eq!(a, b);
        assert_eq!(a.get(&t).and_then(Value::as_str), Some("5 µm"));
        assert_eq!(a.canonical(&t), "solids[0].size.single");
    }

    #[test]
    fn set_replaces_inserts_and_refuses_with_reasons() {
        let mut t = tree();
        KeyPath::parse("initial.loading")
            .unwrap()
            .set(&mut t, Value::String("10 vol%".into()))
            .unwrap();
        assert_eq!(t["initial"]["loading"].as_str(), Some("10 vol%"));
        // A last key left at its default is added.
        KeyPath::parse("numerics.cells")
            .unwrap()
            .set(&mut t, Value::from(50))
            .unwrap();
        assert_eq!(t["numerics"]["cells"].as_u64(), Some(50));
        let err = |p: &str| {
            KeyPath::parse(p)
                .unwrap()
                .set(&mut tree(), Value::Null)
                .unwrap_err()
        };
        assert!(err("intial.loading").contains("did you mean `initial`?"));
        assert!(err("solids.1.name").contains("has 1 item"));
        assert!(err("solids.x.name").contains("address its items by number"));
        assert!(err("initial.loading.x").contains("single value"));
        assert!(err("run.seed").contains("must be added"));
        assert!(KeyPath::parse("a..b").is_err());
        assert!(KeyPath::parse("a[x]").is_err());
    }
}
