//! Topic routing: concrete topic → (tank, topic kind, payload format).
use std::collections::HashMap;

use crate::config::{Config, PayloadFormat, TopicKind};

/// Where a configured topic leads.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Route {
    /// Index of the tank in `Config::tanks`.
    pub tank_index: usize,
    /// What the topic carries.
    pub kind: TopicKind,
    /// How its payload is encoded.
    pub format: PayloadFormat,
}

/// Exact-match table of every tank's concrete topics.
#[derive(Debug, Clone, Default)]
pub struct TopicRouter {
    routes: HashMap<String, Route>,
}

impl TopicRouter {
    /// Routes of every tank of the configuration (topics are unique across tanks, the config checks it).
    pub fn new(config: &Config) -> Self {
        let mut routes = HashMap::new();
        for (tank_index, tank) in config.tanks.iter().enumerate() {
            for (kind, binding) in tank.topics.iter() {
                routes.entry(binding.topic.clone()).or_insert(Route {
                    tank_index,
                    kind,
                    format: binding.format,
                });
            }
        }
        Self { routes }
    }

    /// The route of a topic; `None` for a topic no tank listens to.
    pub fn route(&self, topic: &str) -> Option<Route> {
        self.routes.get(topic).copied()
    }

    /// Number of routed topics.
    pub fn len(&self) -> usize {
        self.routes.len()
    }

    /// True when no topic is routed.
    pub fn is_empty(&self) -> bool {
        self.routes.is_empty()
    }
}
