//! Maps between byte offsets in the TOML source, key paths and 1-based line/column numbers.
//!
//! The source is re-parsed with `toml::de::DeTable`, which keeps the span of every key and value.
use std::ops::Range;

use toml::de::{DeTable, DeValue};
use toml::Spanned;

use super::key_path::{KeyPath, KeySegment};

/// 1-based line and column (in characters) of a byte offset.
pub fn line_column(source: &str, offset: usize) -> (usize, usize) {
    let offset = offset.min(source.len());
    let mut start = offset;
    while !source.is_char_boundary(start) {
        start -= 1;
    }
    let before = &source[..start];
    let line = before.matches('\n').count() + 1;
    let line_start = before.rfind('\n').map_or(0, |at| at + 1);
    let column = before[line_start..].chars().count() + 1;
    (line, column)
}

/// The key path of the innermost key, value or table header that contains `offset`.
pub fn path_at_offset(source: &str, offset: usize) -> KeyPath {
    let (document, _errors) = DeTable::parse_recoverable(source);
    let mut path = KeyPath::root();
    find_in_table(document.get_ref(), offset, &mut path);
    path
}

/// The span of the deepest key of `path` present in the source (the key itself where it is a table key,
/// the element for an array index), with how many segments were found. `None` when not even the first is.
pub fn span_of_path(source: &str, path: &KeyPath) -> Option<(Range<usize>, usize)> {
    let (document, _errors) = DeTable::parse_recoverable(source);
    let mut best: Option<(Range<usize>, usize)> = None;
    let mut table: Option<&DeTable<'_>> = Some(document.get_ref());
    let mut value: Option<&Spanned<DeValue<'_>>> = None;
    for (depth, segment) in path.segments().iter().enumerate() {
        match segment {
            KeySegment::Key(key) => {
                let Some(current) = table else { break };
                let Some((found_key, found_value)) = current.get_key_value(key.as_str()) else {
                    break;
                };
                best = Some((found_key.span(), depth + 1));
                value = Some(found_value);
            }
            KeySegment::Index(index) => {
                let Some(DeValue::Array(array)) = value.map(|v| v.get_ref()) else {
                    break;
                };
                let Some(item) = array.get(*index) else { break };
                best = Some((item.span(), depth + 1));
                value = Some(item);
            }
        }
        table = match value.map(|v| v.get_ref()) {
            Some(DeValue::Table(t)) => Some(t),
            _ => None,
        };
    }
    best
}

fn contains(span: &Range<usize>, offset: usize) -> bool {
    span.contains(&offset) || (span.is_empty() && span.start == offset)
}

fn find_in_table(table: &DeTable<'_>, offset: usize, path: &mut KeyPath) -> bool {
    for (key, value) in table.iter() {
        path.push(KeySegment::Key(key.get_ref().to_string()));
        if find_in_value(value, offset, path) || contains(&key.span(), offset) {
            return true;
        }
        path.pop();
    }
    false
}

fn find_in_value(value: &Spanned<DeValue<'_>>, offset: usize, path: &mut KeyPath) -> bool {
    match value.get_ref() {
        DeValue::Table(table) => find_in_table(table, offset, path) || contains(&value.span(), offset),
        DeValue::Array(array) => {
            for (index, item) in array.iter().enumerate() {
                path.push(KeySegment::Index(index));
                if find_in_value(item, offset, path) {
                    return true;
                }
                path.pop();
            }
            contains(&value.span(), offset)
        }
        _ => contains(&value.span(), offset),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const DOC: &str =
        "[site]\nname = \"x\"\n\n[[tanks]]\nid = \"a\"\n\n[[tanks]]\nid = \"b\"\nvolume_l = 3\n";

    #[test]
    fn line_and_column_are_one_based() {
        assert_eq!(line_column(DOC, 0), (1, 1));
        let at = DOC.find("volume_l").unwrap();
        assert_eq!(line_column(DOC, at), (9, 1));
        assert_eq!(line_column(DOC, at + 11), (9, 12));
        assert_eq!(line_column("é = 1", 3), (1, 3));
    }

    #[test]
    fn finds_the_key_path_at_an_offset() {
        let at = DOC.find("volume_l").unwrap();
        assert_eq!(path_at_offset(DOC, at).to_string(), "tanks[1].volume_l");
        let at = DOC.rfind('3').unwrap();
        assert_eq!(path_at_offset(DOC, at).to_string(), "tanks[1].volume_l");
        let header = DOC.rfind("[[tanks]]").unwrap();
        assert_eq!(path_at_offset(DOC, header).to_string(), "tanks[1]");
    }

    #[test]
    fn finds_the_deepest_present_key_of_a_path() {
        let (span, found) = span_of_path(DOC, &KeyPath::parse("tanks[1].volume_l")).unwrap();
        assert_eq!(found, 3);
        assert_eq!(line_column(DOC, span.start), (9, 1));
        let (span, found) = span_of_path(DOC, &KeyPath::parse("tanks[0].topics.combined")).unwrap();
        assert_eq!(found, 2);
        assert_eq!(line_column(DOC, span.start), (4, 1));
        assert!(span_of_path(DOC, &KeyPath::parse("broker.host")).is_none());
    }
}
