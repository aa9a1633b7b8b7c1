//! Where each key of a YAML document sits, so that checks made after parsing
//! (a negative size, a loading above the packing limit) can still point at
//! the line and column the user wrote.

use std::collections::HashMap;
use yaml_rust2::parser::{Event, Parser};

/// Map from key path (`solids[0].size.single`) to the 1-based (line, column)
/// of its value.
#[derive(Debug, Default, Clone)]
pub struct Locations {
    values: HashMap<String, (usize, usize)>,
}

enum Frame {
    Map { path: String, key: Option<String> },
    Seq { path: String, index: usize },
}

fn child(parent: &str, key: &str) -> String {
    if parent.is_empty() {
        key.to_string()
    } else {
        format!("{parent}.{key}")
    }
}

impl Locations {
    /// Scan `text`; a document that does not parse yields what was seen up to the error
    /// (serde_yaml reports the syntax error itself).
    pub fn scan(text: &str) -> Locations {
        let mut out = Locations::default();
        let mut stack: Vec<Frame> = Vec::new();
        let mut parser = Parser::new_from_str(text);
        while let Ok((event, mark)) = parser.next_token() {
            // yaml-rust2 markers count columns from 0 and lines from 1.
            let here = (mark.line(), mark.col() + 1);
            // The path of the node this event starts, or None if it is a mapping key.
            let node_path = match stack.last_mut() {
                None => Some(String::new()),
                Some(Frame::Seq { path, index }) => {
                    if matches!(event, Event::SequenceEnd | Event::MappingEnd) {
                        None
                    } else {
                        let p = format!("{path}[{index}]");
                        *index += 1;
                        Some(p)
                    }
                }
                Some(Frame::Map { path, key }) => match (&event, key.take()) {
                    (Event::MappingEnd, _) => None,
                    (Event::Scalar(s, ..), None) => {
                        *key = Some(s.clone());
                        None
                    }
                    // A complex key (a mapping used as a key) is not used by scenario files.
                    (_, None) => None,
                    (_, Some(k)) => Some(child(path, &k)),
                },
            };
            match event {
                Event::StreamEnd => break,
                Event::Scalar(..) | Event::Alias(..) => {
                    if let Some(p) = node_path {
                        out.values.entry(p).or_insert(here);
                    }
                }
                Event::MappingStart(..) => {
                    let p = node_path.unwrap_or_default();
                    out.values.entry(p.clone()).or_insert(here);
                    stack.push(Frame::Map { path: p, key: None });
                }
                Event::SequenceStart(..) => {
                    let p = node_path.unwrap_or_default();
                    out.values.entry(p.clone()).or_insert(here);
                    stack.push(Frame::Seq { path: p, index: 0 });
                }
                Event::MappingEnd | Event::SequenceEnd => {
                    stack.pop();
                }
                _ => {}
            }
        }
        out
    }

    /// Position of `path`, or of its nearest written ancestor when the key was
    /// left out (a default), so a message always points somewhere useful.
    pub fn find(&self, path: &str) -> Option<(usize, usize)> {
        let mut p = path.to_string();
        loop {
            if let Some(&pos) = self.values.get(&p) {
                return Some(pos);
            }
            let cut = p.rfind(['.', '['])?;
            p.truncate(cut);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_nested_keys_and_list_items() {
        let text = "format: 1\nsolids:\n  - name: a\n    size:\n      single: \"5 µm\"\n  - name: b\n    size: { log_normal: { median: \"9 µm\", geometric_sd: 1.5 } }\n";
        let loc = Locations::scan(text);
        assert_eq!(loc.find("format"), Some((1, 9)));
        assert_eq!(loc.find("solids[0].name"), Some((3, 11)));
        assert_eq!(loc.find("solids[0].size.single"), Some((5, 15)));
        // Columns count characters, not bytes (`µ` earlier on the line is one column).
        assert_eq!(
            loc.find("solids[1].size.log_normal.geometric_sd"),
            Some((7, 57))
        );
        // Missing key: falls back to its parent.
        assert_eq!(loc.find("solids[1].mass_share"), loc.find("solids[1]"));
    }
}
