//! Turning byte offsets and key paths of a TOML file into line and column numbers.

use std::ops::Range;

/// One step of a path to a value in the incident file: a key or an index into an array of
/// tables (`scenario[2].sigma_m` is `[Key("scenario"), Index(2), Key("sigma_m")]`).
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum PathStep {
    /// A table key.
    Key(String),
    /// An index into an array of tables or an array value.
    Index(usize),
}

/// A path to a value, built with [`FieldPath::new`] and [`FieldPath::key`] / [`FieldPath::index`].
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct FieldPath(pub Vec<PathStep>);

impl FieldPath {
    /// The path to a top-level key.
    #[must_use]
    pub fn new(key: &str) -> Self {
        Self(vec![PathStep::Key(key.to_owned())])
    }

    /// This path extended by a key.
    #[must_use]
    pub fn key(&self, key: &str) -> Self {
        let mut p = self.clone();
        p.0.push(PathStep::Key(key.to_owned()));
        p
    }

    /// This path extended by an index.
    #[must_use]
    pub fn index(&self, i: usize) -> Self {
        let mut p = self.clone();
        p.0.push(PathStep::Index(i));
        p
    }
}

impl std::fmt::Display for FieldPath {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        for (n, step) in self.0.iter().enumerate() {
            match step {
                PathStep::Key(k) if n == 0 => write!(f, "{k}")?,
                PathStep::Key(k) => write!(f, ".{k}")?,
                PathStep::Index(i) => write!(f, "[{i}]")?,
            }
        }
        Ok(())
    }
}

/// Line and column (both from 1) of a byte offset in `text`; columns count characters.
#[must_use]
pub fn line_col(text: &str, offset: usize) -> (usize, usize) {
    let offset = offset.min(text.len());
    let before = &text[..floor_char_boundary(text, offset)];
    let line = before.matches('\n').count() + 1;
    let line_start = before.rfind('\n').map_or(0, |i| i + 1);
    let col = before[line_start..].chars().count() + 1;
    (line, col)
}

fn floor_char_boundary(text: &str, mut i: usize) -> usize {
    while i > 0 && !text.is_char_boundary(i) {
        i -= 1;
    }
    i
}

/// The byte span of the value at `path` in a TOML document, or of the nearest enclosing
/// table that exists (so a missing key points at its table header).
#[must_use]
pub fn span_of(text: &str, path: &FieldPath) -> Option<Range<usize>> {
    enum Node<'a> {
        Item(&'a toml_edit::Item),
        Table(&'a toml_edit::Table),
    }
    let doc = toml_edit::Document::parse(text).ok()?;
    let mut node = Node::Table(doc.as_table());
    let mut best = None;
    for step in &path.0 {
        let next = match (step, &node) {
            (PathStep::Key(k), Node::Table(t)) => t.get_key_value(k).map(|(key, v)| {
                best = key.span().or(best.clone());
                Node::Item(v)
            }),
            (PathStep::Key(k), Node::Item(toml_edit::Item::Table(t))) => {
                t.get_key_value(k).map(|(key, v)| {
                    best = key.span().or(best.clone());
                    Node::Item(v)
                })
            }
            (
                PathStep::Key(k),
                Node::Item(toml_edit::Item::Value(toml_edit::Value::InlineTable(t))),
            ) => t.get_key_value(k).map(|(key, v)| {
                best = key.span().or(best.clone());
                Node::Item(v)
            }),
            (PathStep::Index(i), Node::Item(toml_edit::Item::ArrayOfTables(a))) => {
                a.get(*i).map(Node::Table)
            }
            (
                PathStep::Index(i),
                Node::Item(toml_edit::Item::Value(toml_edit::Value::Array(a))),
            ) => {
                if let Some(v) = a.get(*i) {
                    best = v.span().or(best.clone());
                }
                None
            }
            _ => None,
        };
        match next {
            Some(n) => {
                let span = match &n {
                    Node::Item(it) => it.span(),
                    Node::Table(t) => t.span(),
                };
                if span.is_some() {
                    best = span;
                }
                node = n;
            }
            None => break,
        }
    }
    best
}

/// The path of the deepest key, value or table of a TOML document that holds the byte
/// `offset` (`None` when the text is not TOML or nothing holds it).
#[must_use]
pub fn path_at(text: &str, offset: usize) -> Option<FieldPath> {
    let doc = toml_edit::Document::parse(text).ok()?;
    let mut best = None;
    walk_table(doc.as_table(), &FieldPath::default(), offset, &mut best);
    best
}

fn holds(span: Option<Range<usize>>, offset: usize) -> bool {
    span.is_some_and(|s| s.start <= offset && offset < s.end.max(s.start + 1))
}

fn walk_table(t: &toml_edit::Table, at: &FieldPath, offset: usize, best: &mut Option<FieldPath>) {
    for (k, _) in t.iter() {
        let Some((key, item)) = t.get_key_value(k) else {
            continue;
        };
        let here = at.key(k);
        if holds(key.span(), offset) || holds(item.span(), offset) {
            *best = Some(here.clone());
        }
        match item {
            toml_edit::Item::Table(inner) => {
                if holds(inner.span(), offset) {
                    *best = Some(here.clone());
                }
                walk_table(inner, &here, offset, best);
            }
            toml_edit::Item::ArrayOfTables(a) => {
                for (i, inner) in a.iter().enumerate() {
                    let there = here.index(i);
                    if holds(inner.span(), offset) {
                        *best = Some(there.clone());
                    }
                    walk_table(inner, &there, offset, best);
                }
            }
            toml_edit::Item::Value(v) => walk_value(v, &here, offset, best),
            toml_edit::Item::None => {}
        }
    }
}

fn walk_value(v: &toml_edit::Value, at: &FieldPath, offset: usize, best: &mut Option<FieldPath>) {
    match v {
        toml_edit::Value::InlineTable(t) => {
            for (k, _) in t.iter() {
                let Some((key, inner)) = t.get_key_value(k) else {
                    continue;
                };
                let here = at.key(k);
                if holds(key.span(), offset) || holds(inner.span(), offset) {
                    *best = Some(here.clone());
                }
                if let toml_edit::Item::Value(inner) = inner {
                    walk_value(inner, &here, offset, best);
                }
            }
        }
        toml_edit::Value::Array(a) => {
            for (i, inner) in a.iter().enumerate() {
                let here = at.index(i);
                if holds(inner.span(), offset) {
                    *best = Some(here.clone());
                }
                walk_value(inner, &here, offset, best);
            }
        }
        _ => {}
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "[incident]\ntitle = \"x\"\n\n[[scenario]]\nid = \"a\"\n\n[[scenario]]\nid = \"b\"\nsigma_m = -5\n";

    #[test]
    fn line_and_column_count_from_one() {
        assert_eq!(line_col(TEXT, 0), (1, 1));
        let off = TEXT.find("title").unwrap();
        assert_eq!(line_col(TEXT, off), (2, 1));
        let off = TEXT.find("\"x\"").unwrap();
        assert_eq!(line_col(TEXT, off), (2, 9));
    }

    #[test]
    fn a_key_path_finds_its_value_in_an_array_of_tables() {
        let p = FieldPath::new("scenario").index(1).key("sigma_m");
        assert_eq!(p.to_string(), "scenario[1].sigma_m");
        let span = span_of(TEXT, &p).unwrap();
        assert_eq!(line_col(TEXT, span.start).0, 9);
        // A missing key falls back to its table.
        let p = FieldPath::new("scenario").index(0).key("weight");
        let span = span_of(TEXT, &p).unwrap();
        assert!(line_col(TEXT, span.start).0 >= 4);
    }

    #[test]
    fn the_path_at_an_offset_is_the_deepest_key_holding_it() {
        let text =
            "[grid]\ncell_m = 250\n\n[[scenario]]\nid = \"a\"\nwaypoints = [[1, 2], [3, 4]]\n";
        let at = |needle: &str| path_at(text, text.find(needle).unwrap()).map(|p| p.to_string());
        assert_eq!(at("250").as_deref(), Some("grid.cell_m"));
        assert_eq!(at("[[scenario]]").as_deref(), Some("scenario[0]"));
        assert_eq!(at("[3, 4]").as_deref(), Some("scenario[0].waypoints[1]"));
        assert_eq!(at("waypoints").as_deref(), Some("scenario[0].waypoints"));
    }
}
