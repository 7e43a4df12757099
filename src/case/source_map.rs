//! Where things are in the case text: byte offsets to line numbers, and the dotted key path (e.g.
//! `cells.layout.count`, `cells.list[2].x`) that owns a byte span. Used to turn TOML and serde errors, which
//! only carry a span, into messages that name the key.

use std::ops::Range;

use toml::de::{DeTable, DeValue};

/// 1-based line number of byte offset `offset` in `text`.
pub fn line_of(text: &str, offset: usize) -> usize {
    let end = offset.min(text.len());
    text.as_bytes()[..end].iter().filter(|&&b| b == b'\n').count() + 1
}

/// Every key of a TOML document with the span of its name and of its value.
pub struct KeyMap {
    entries: Vec<KeyEntry>,
}

struct KeyEntry {
    path: String,
    key_span: Option<Range<usize>>,
    value_span: Range<usize>,
}

impl KeyMap {
    /// Build from the document text; `None` if the text is not valid TOML (the caller reports the syntax
    /// error itself).
    pub fn parse(text: &str) -> Option<KeyMap> {
        let document = DeTable::parse(text).ok()?;
        let mut entries = Vec::new();
        walk_table(document.get_ref(), "", &mut entries);
        Some(KeyMap { entries })
    }

    /// The dotted path of the key whose name is exactly at `span`, or else of the innermost value that
    /// contains `span`.
    pub fn path_at(&self, span: &Range<usize>) -> Option<&str> {
        if let Some(entry) = self.entries.iter().find(|e| e.key_span.as_ref() == Some(span)) {
            return Some(&entry.path);
        }
        self.entries
            .iter()
            .filter(|e| e.value_span.start <= span.start && span.end <= e.value_span.end)
            .min_by_key(|e| e.value_span.end - e.value_span.start)
            .map(|e| e.path.as_str())
    }
}

fn join(prefix: &str, key: &str) -> String {
    if prefix.is_empty() {
        key.to_string()
    } else {
        format!("{prefix}.{key}")
    }
}

fn walk_table(table: &DeTable<'_>, prefix: &str, entries: &mut Vec<KeyEntry>) {
    for (key, value) in table.iter() {
        let path = join(prefix, key.get_ref());
        entries.push(KeyEntry { path: path.clone(), key_span: Some(key.span()), value_span: value.span() });
        walk_value(value.get_ref(), &path, entries);
    }
}

fn walk_value(value: &DeValue<'_>, path: &str, entries: &mut Vec<KeyEntry>) {
    match value {
        DeValue::Table(table) => walk_table(table, path, entries),
        DeValue::Array(array) => {
            for (i, element) in array.iter().enumerate() {
                let element_path = format!("{path}[{i}]");
                entries.push(KeyEntry {
                    path: element_path.clone(),
                    key_span: None,
                    value_span: element.span(),
                });
                walk_value(element.get_ref(), &element_path, entries);
            }
        }
        _ => {}
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn paths_and_lines() {
        let text = "title = \"a\"\n[cells]\nradius = 3\nlayout = { kind = \"r\", n = 2 }\n\
                    [[cells.list]]\nx = 1\n[[cells.list]]\nx = \"2 um\"\ny = 3\n";
        let map = KeyMap::parse(text).expect("valid TOML");
        let n_key = text.find("n = 2").expect("present");
        assert_eq!(map.path_at(&(n_key..n_key + 1)), Some("cells.layout.n"));
        let y_value = text.rfind('3').expect("present");
        assert_eq!(map.path_at(&(y_value..y_value + 1)), Some("cells.list[1].y"));
        assert_eq!(line_of(text, y_value), 9);
        assert_eq!(line_of(text, 0), 1);
    }
}
