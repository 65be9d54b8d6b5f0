//! The `[site]` section: the site's display name and the slug derived from it.
use serde::Deserialize;

use super::error::Invalid;
use super::key_path::KeyPath;

/// `[site]` as written in the file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawSite {
    pub name: String,
}

/// The site halotank runs for.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SiteConfig {
    /// Display name, e.g. "Brannock Sound Hatchery".
    pub name: String,
    /// Lower-case ASCII slug of the name (`brannock-sound-hatchery`), used in default ids and topics.
    pub slug: String,
}

impl RawSite {
    pub(crate) fn resolve(self, path: &KeyPath) -> Result<SiteConfig, Invalid> {
        let name = self.name.trim().to_string();
        let slug = slugify(&name);
        if slug.is_empty() {
            return Err(Invalid::new(
                path.key("name"),
                "must contain at least one ASCII letter or digit",
            ));
        }
        Ok(SiteConfig { name, slug })
    }
}

/// Lower-case ASCII letters and digits, every other run of characters replaced by one `-`.
pub fn slugify(text: &str) -> String {
    let mut slug = String::new();
    for c in text.chars() {
        if c.is_ascii_alphanumeric() {
            slug.push(c.to_ascii_lowercase());
        } else if !slug.is_empty() && !slug.ends_with('-') {
            slug.push('-');
        }
    }
    while slug.ends_with('-') {
        slug.pop();
    }
    slug
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn slugs_are_lower_case_ascii_with_single_dashes() {
        assert_eq!(slugify("Brannock Sound Hatchery"), "brannock-sound-hatchery");
        assert_eq!(slugify("  Tank Hall #2 (north) "), "tank-hall-2-north");
        assert_eq!(slugify("☃"), "");
    }
}
