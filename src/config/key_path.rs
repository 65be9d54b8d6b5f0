//! Key paths into the configuration file (`tanks[2].topics.conductivity`), used to name the key at fault.
use std::fmt;

/// One step of a [`KeyPath`]: a table key or an array index.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum KeySegment {
    /// A key of a table.
    Key(String),
    /// An index into an array (0-based, as in the file's order).
    Index(usize),
}

/// A path of keys and indices from the document root, e.g. `tanks[2].topics.conductivity`.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct KeyPath(Vec<KeySegment>);

impl KeyPath {
    /// The document root (empty path).
    pub fn root() -> Self {
        Self(Vec::new())
    }

    /// Parses a dotted path with `[i]` indices, e.g. `tanks[2].volume_l` (keys are bare here).
    pub fn parse(text: &str) -> Self {
        let mut segments = Vec::new();
        for part in text.split('.').filter(|p| !p.is_empty()) {
            let (key, mut rest) = match part.find('[') {
                Some(at) => (&part[..at], &part[at..]),
                None => (part, ""),
            };
            if !key.is_empty() {
                segments.push(KeySegment::Key(key.to_string()));
            }
            while let Some(stripped) = rest.strip_prefix('[') {
                let Some(end) = stripped.find(']') else { break };
                if let Ok(index) = stripped[..end].parse() {
                    segments.push(KeySegment::Index(index));
                }
                rest = &stripped[end + 1..];
            }
        }
        Self(segments)
    }

    /// This path extended by a key.
    pub fn key(&self, key: &str) -> Self {
        let mut next = self.clone();
        next.0.push(KeySegment::Key(key.to_string()));
        next
    }

    /// This path extended by an array index.
    pub fn index(&self, index: usize) -> Self {
        let mut next = self.clone();
        next.0.push(KeySegment::Index(index));
        next
    }

    /// The segments from the root.
    pub fn segments(&self) -> &[KeySegment] {
        &self.0
    }

    /// True for the document root.
    pub fn is_root(&self) -> bool {
        self.0.is_empty()
    }

    pub(crate) fn push(&mut self, segment: KeySegment) {
        self.0.push(segment);
    }

    pub(crate) fn pop(&mut self) {
        self.0.pop();
    }
}

impl From<Vec<KeySegment>> for KeyPath {
    fn from(segments: Vec<KeySegment>) -> Self {
        Self(segments)
    }
}

impl fmt::Display for KeyPath {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, segment) in self.0.iter().enumerate() {
            match segment {
                KeySegment::Index(index) => write!(f, "[{index}]")?,
                KeySegment::Key(key) => {
                    if i > 0 {
                        f.write_str(".")?;
                    }
                    let bare = !key.is_empty()
                        && key
                            .chars()
                            .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-');
                    if bare {
                        f.write_str(key)?;
                    } else {
                        write!(f, "{key:?}")?;
                    }
                }
            }
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn displays_and_parses_dotted_paths_with_indices() {
        let path = KeyPath::root()
            .key("tanks")
            .index(2)
            .key("topics")
            .key("conductivity");
        assert_eq!(path.to_string(), "tanks[2].topics.conductivity");
        assert_eq!(KeyPath::parse("tanks[2].topics.conductivity"), path);
        assert_eq!(KeyPath::root().key("a.b").to_string(), "\"a.b\"");
        assert!(KeyPath::parse("").is_root());
    }
}
