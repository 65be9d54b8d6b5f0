//! The `[publish]` section: the topic prefix halotank publishes its results under.
use serde::Deserialize;

use super::defaults;
use super::error::Invalid;
use super::key_path::KeyPath;
use super::site::SiteConfig;
use super::topics::check_topic_name;

/// `[publish]` as written in the file.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
pub(crate) struct RawPublish {
    topic_prefix: Option<String>,
}

/// What halotank publishes.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PublishConfig {
    /// Prefix of every published topic, no trailing `/` (default `halotank/<site slug>`).
    pub topic_prefix: String,
}

impl RawPublish {
    pub(crate) fn resolve(self, path: &KeyPath, site: &SiteConfig) -> Result<PublishConfig, Invalid> {
        let key = path.key("topic_prefix");
        let topic_prefix = self
            .topic_prefix
            .unwrap_or_else(|| format!("{}/{}", defaults::PUBLISH_ROOT, site.slug));
        check_topic_name(&topic_prefix).map_err(|m| Invalid::new(key.clone(), m))?;
        if topic_prefix.starts_with('/') || topic_prefix.ends_with('/') || topic_prefix.starts_with('$') {
            return Err(Invalid::new(
                key,
                "must not start or end with `/`, nor start with `$`",
            ));
        }
        Ok(PublishConfig { topic_prefix })
    }
}
