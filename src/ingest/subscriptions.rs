//! The MQTT filters the daemon subscribes to: every tank topic plus `ingest.subscribe`, without overlaps.
use crate::config::topics::filter_covers;
use crate::config::Config;

/// Extra filters first (file order), then tank topics (tank order); exact duplicates and entries covered
/// by another entry are dropped, because overlapping subscriptions may deliver a message once per match
/// (MQTT 3.1.1 §3.3.5) and would store it twice.
pub fn subscriptions(config: &Config) -> Vec<String> {
    let mut all: Vec<String> = Vec::new();
    let candidates = config.ingest.subscribe.iter().cloned().chain(
        config
            .tanks
            .iter()
            .flat_map(|t| t.topics.iter().map(|(_, b)| b.topic.clone()).collect::<Vec<_>>()),
    );
    for candidate in candidates {
        if !all.contains(&candidate) {
            all.push(candidate);
        }
    }
    let keep = |i: usize| {
        !all.iter().enumerate().any(|(j, other)| {
            // Of two entries covering each other (equivalent filters), the earlier is kept.
            j != i && filter_covers(other, &all[i]) && (!filter_covers(&all[i], other) || j < i)
        })
    };
    (0..all.len())
        .filter(|&i| keep(i))
        .map(|i| all[i].clone())
        .collect()
}
