//! Where a profile value comes from: a published source, common practice, recalled from memory, a site
//! override or a built-in default.
use serde::Serialize;

/// Prefix marking a fact of the trade.
pub const COMMON_PRACTICE: &str = "common practice";
/// Prefix marking a value recalled, not checked against the original.
pub const FROM_MEMORY: &str = "from memory, verify";

/// The kind of a provenance.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ProvenanceKind {
    /// A published source (author year, journal or handbook).
    Published,
    /// A fact of the trade.
    CommonPractice,
    /// Recalled, to be verified against the original.
    FromMemory,
    /// Set for one tank in the site configuration.
    SiteOverride,
    /// halotank's own default (not a species fact).
    Default,
}

/// The provenance of one value: its kind and the source text as written.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Provenance {
    /// The source as written in the library (or the override's note).
    pub source: String,
    /// What kind of source it is.
    #[serde(rename = "provenance")]
    pub kind: ProvenanceKind,
}

impl Provenance {
    /// Classifies a library source text.
    ///
    /// "from memory, verify" anywhere makes it [`ProvenanceKind::FromMemory`] (the weakest part decides);
    /// else a text starting with "common practice" is [`ProvenanceKind::CommonPractice`]; else it must
    /// name a year (four digits, 1800-2099) to count as [`ProvenanceKind::Published`].
    pub fn from_library(source: &str) -> Result<Self, String> {
        let text = source.trim();
        if text.is_empty() {
            return Err("source must not be empty".to_string());
        }
        let lower = text.to_lowercase();
        let kind = if lower.contains(FROM_MEMORY) {
            ProvenanceKind::FromMemory
        } else if lower.starts_with(COMMON_PRACTICE) {
            ProvenanceKind::CommonPractice
        } else if names_a_year(text) {
            ProvenanceKind::Published
        } else {
            return Err(format!(
                "source `{text}` is not a provenance: cite a published source with its year, \
                 or start with \"{COMMON_PRACTICE}\", or say \"{FROM_MEMORY}\""
            ));
        };
        Ok(Self {
            source: text.to_string(),
            kind,
        })
    }

    /// A value set for one tank in the site configuration; `note` is the override's own source, if given.
    pub fn site_override(tank_id: &str, note: Option<&str>) -> Self {
        let source = match note {
            Some(n) if !n.trim().is_empty() => format!("tank `{tank_id}` override: {}", n.trim()),
            _ => format!("tank `{tank_id}` override in the site configuration"),
        };
        Self {
            source,
            kind: ProvenanceKind::SiteOverride,
        }
    }

    /// A built-in default of halotank.
    pub fn default_setting(what: &str) -> Self {
        Self {
            source: format!("halotank default: {what}"),
            kind: ProvenanceKind::Default,
        }
    }
}

/// True if the text holds a standalone four-digit year 1800-2099.
fn names_a_year(text: &str) -> bool {
    let bytes = text.as_bytes();
    bytes.windows(4).enumerate().any(|(i, w)| {
        let digits = w.iter().all(u8::is_ascii_digit);
        let before_ok = i == 0 || !bytes[i - 1].is_ascii_digit();
        let after_ok = bytes.get(i + 4).is_none_or(|b| !b.is_ascii_digit());
        digits
            && before_ok
            && after_ok
            && (w.starts_with(b"18") || w.starts_with(b"19") || w.starts_with(b"20"))
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn classifies_the_three_library_forms() {
        let p = Provenance::from_library("McGraw et al. 2002, J. World Aquacult. Soc. 33(1):78-84").unwrap();
        assert_eq!(p.kind, ProvenanceKind::Published);
        let p = Provenance::from_library("common practice: parr are reared in fresh water").unwrap();
        assert_eq!(p.kind, ProvenanceKind::CommonPractice);
        let p = Provenance::from_library("from memory, verify").unwrap();
        assert_eq!(p.kind, ProvenanceKind::FromMemory);
    }

    #[test]
    fn a_recalled_part_makes_the_whole_value_recalled() {
        let p =
            Provenance::from_library("Gosling 2021 for the lower bound; upper from memory, verify").unwrap();
        assert_eq!(p.kind, ProvenanceKind::FromMemory);
    }

    #[test]
    fn text_that_is_no_provenance_is_refused() {
        assert!(Provenance::from_library("").is_err());
        assert!(Provenance::from_library("   ").is_err());
        assert!(Provenance::from_library("a good book").is_err());
        // Page numbers are not years.
        assert!(Provenance::from_library("Aquaculture 236:285").is_err());
        assert!(Provenance::from_library("Aquaculture 12345").is_err());
    }

    #[test]
    fn override_and_default_provenance() {
        let p = Provenance::site_override("smolt-t1", Some("site veterinarian"));
        assert_eq!(p.kind, ProvenanceKind::SiteOverride);
        assert!(p.source.contains("smolt-t1") && p.source.contains("site veterinarian"));
        assert_eq!(Provenance::default_setting("x").kind, ProvenanceKind::Default);
    }
}
