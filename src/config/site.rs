//! The `[site]` section: the site's display name, the slug derived from it, and the species library.
use std::path::{Path, PathBuf};

use serde::Deserialize;

use super::error::Invalid;
use super::key_path::KeyPath;

/// `[site]` as written in the file.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawSite {
    pub name: String,
    pub species_library: Option<String>,
}

/// The site halotank runs for.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SiteConfig {
    /// Display name, e.g. "Brannock Sound Hatchery".
    pub name: String,
    /// Lower-case ASCII slug of the name (`brannock-sound-hatchery`), used in default ids and topics.
    pub slug: String,
    /// `species_library = "path"`: a species library file replacing the built-in one (resolved against
    /// the configuration file's folder). `None`: the library embedded in halotank.
    pub species_library: Option<PathBuf>,
}

impl RawSite {
    pub(crate) fn resolve(self, path: &KeyPath, base: &Path) -> Result<SiteConfig, Invalid> {
        let name = self.name.trim().to_string();
        let slug = slugify(&name);
        if slug.is_empty() {
            return Err(Invalid::new(
                path.key("name"),
                "must contain at least one ASCII letter or digit",
            ));
        }
        let species_library = match self.species_library.as_deref().map(str::trim) {
            Some("") => {
                return Err(Invalid::new(
                    path.key("species_library"),
                    "must not be empty when given (leave it out to use the built-in library)",
                ))
            }
            Some(p) => Some(super::resolve_path(base, p)),
            None => None,
        };
        Ok(SiteConfig {
            name,
            slug,
            species_library,
        })
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
