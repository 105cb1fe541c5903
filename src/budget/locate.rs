//! Where each value sits in the budget file.
//!
//! serde_yaml reports the position of the errors it raises itself, but once
//! the raw types are built the positions are gone. This map, built from the
//! YAML event stream, gives the line and column of every value by its field
//! path (`chain[1].difference_amp.r1`), so validation errors can point at
//! the line too.

use saphyr_parser::{Event, Parser};
use std::collections::HashMap;

/// A 1-based line and column in the budget file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub struct Position {
    /// Line, from 1.
    pub line: usize,
    /// Column, from 1.
    pub column: usize,
}

/// Field path to position, for every node of the document.
#[derive(Debug, Default)]
pub struct SourceMap {
    positions: HashMap<String, Position>,
}

enum Frame {
    Map {
        path: String,
        key: Option<(String, Position)>,
    },
    Seq {
        path: String,
        next: usize,
    },
}

impl SourceMap {
    /// Build the map from the file's text. Text that is not valid YAML gives
    /// a partial map; the YAML error itself is reported by the deserializer.
    pub fn build(text: &str) -> SourceMap {
        let mut positions = HashMap::new();
        let mut stack: Vec<Frame> = Vec::new();
        for item in Parser::new_from_str(text) {
            let Ok((event, span)) = item else { break };
            let position = Position {
                line: span.start.line(),
                column: span.start.col() + 1,
            };
            match event {
                Event::Scalar(..)
                | Event::Alias(_)
                | Event::MappingStart(..)
                | Event::SequenceStart(..) => {
                    let is_container =
                        matches!(event, Event::MappingStart(..) | Event::SequenceStart(..));
                    let mut recorded = position;
                    let path = match stack.last_mut() {
                        None => String::new(),
                        Some(Frame::Map { path, key }) => match key.take() {
                            Some((k, key_position)) => {
                                // A map or list value is shown at its key,
                                // a single value where it is written.
                                if is_container {
                                    recorded = key_position;
                                }
                                join(path, &k)
                            }
                            None => {
                                // This node is a key.
                                let text = match &event {
                                    Event::Scalar(text, ..) => text.to_string(),
                                    _ => "?".to_string(),
                                };
                                *key = Some((text, position));
                                if is_container {
                                    stack.push(Frame::Map {
                                        path: "?key".into(),
                                        key: None,
                                    });
                                }
                                continue;
                            }
                        },
                        Some(Frame::Seq { path, next }) => {
                            *next += 1;
                            format!("{path}[{}]", *next - 1)
                        }
                    };
                    positions.entry(path.clone()).or_insert(recorded);
                    match event {
                        Event::MappingStart(..) => stack.push(Frame::Map { path, key: None }),
                        Event::SequenceStart(..) => stack.push(Frame::Seq { path, next: 0 }),
                        _ => {}
                    }
                }
                Event::MappingEnd | Event::SequenceEnd => {
                    stack.pop();
                }
                _ => {}
            }
        }
        SourceMap { positions }
    }

    /// Whether the document has a value at exactly `path`.
    pub fn contains(&self, path: &str) -> bool {
        self.positions.contains_key(path)
    }

    /// The position of the value at `path`, or of its nearest enclosing
    /// value when that one is absent (a missing field points at its map).
    pub fn locate(&self, path: &str) -> Option<Position> {
        let mut current = path;
        loop {
            if let Some(position) = self.positions.get(current) {
                return Some(*position);
            }
            current = match current.rfind(['.', '[']) {
                Some(cut) => &current[..cut],
                None if !current.is_empty() => "",
                None => return None,
            };
        }
    }
}

fn join(parent: &str, key: &str) -> String {
    if parent.is_empty() {
        key.to_string()
    } else {
        format!("{parent}.{key}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_nested_values() {
        let text = "name: x\nchain:\n  - source:\n      resistance: 1k\n  - difference_amp:\n      r1: 10k\n      r2: {p: 1, n: 2}\n";
        let map = SourceMap::build(text);
        assert_eq!(map.locate("name"), Some(Position { line: 1, column: 7 }));
        assert_eq!(
            map.locate("chain[0].source.resistance"),
            Some(Position {
                line: 4,
                column: 19
            })
        );
        assert_eq!(
            map.locate("chain[1].difference_amp.r1"),
            Some(Position {
                line: 6,
                column: 11
            })
        );
        assert_eq!(map.locate("chain[1].difference_amp.r2.n").unwrap().line, 7);
        // A missing field falls back to its enclosing map.
        assert_eq!(map.locate("chain[1].difference_amp.r4").unwrap().line, 5);
    }
}
