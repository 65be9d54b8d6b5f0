//! `AppState`: what every handler shares: the live view, the database, the token, and per tank what
//! the configuration and species library say (name, volume, species, limits, when a reading is stale).
use std::collections::HashMap;
use std::sync::Arc;

use serde::Serialize;

use super::db::Db;
use super::live::LiveView;
use crate::config::{Config, Secret};
use crate::species::{SpeciesLibrary, SpeciesProfile};

/// A reading is stale after this many expected intervals (unless `[http] stale_after_s` says otherwise).
pub const STALE_AFTER_INTERVALS: f64 = 3.0;

/// The tank's species as the page shows it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SpeciesSummary {
    pub id: String,
    pub common_name: String,
    pub stage: String,
}

/// The species' ranges of a tank (its effective profile, site overrides included), low and high.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct TankLimits {
    pub optimum_practical_salinity: Option<[f64; 2]>,
    pub tolerance_practical_salinity: Option<[f64; 2]>,
    #[serde(rename = "optimum_temperature_C")]
    pub optimum_temperature_c: Option<[f64; 2]>,
}

/// One configured tank.
#[derive(Debug, Clone)]
pub struct TankInfo {
    pub id: String,
    pub name: String,
    pub volume_l: f64,
    pub species: Option<SpeciesSummary>,
    /// The effective species profile (library profile with the site's overrides).
    pub profile: Option<SpeciesProfile>,
    pub limits: TankLimits,
    /// Seconds after which the latest reading is stale.
    pub stale_after_s: f64,
}

impl TankInfo {
    fn new(
        tank: &crate::config::TankConfig,
        profile: Option<&SpeciesProfile>,
        stale_after_s: Option<u64>,
    ) -> Self {
        let range = |r: &crate::species::profile::SourcedRange| Some([r.min, r.max]);
        Self {
            id: tank.id.clone(),
            name: tank.name.clone(),
            volume_l: tank.volume_l,
            species: profile.map(|p| SpeciesSummary {
                id: p.id.clone(),
                common_name: p.common_name.clone(),
                stage: p.stage.clone(),
            }),
            profile: profile.cloned(),
            limits: profile.map_or_else(TankLimits::default, |p| TankLimits {
                optimum_practical_salinity: range(&p.salinity_optimum),
                tolerance_practical_salinity: range(&p.salinity_tolerance),
                optimum_temperature_c: range(&p.temperature_optimum_c),
            }),
            stale_after_s: stale_after_s
                .map_or(STALE_AFTER_INTERVALS * tank.expected_interval_s as f64, |s| {
                    s as f64
                }),
        }
    }
}

struct Inner {
    live: LiveView,
    db: Db,
    token: Option<Secret>,
    token_source: String,
    tanks: Vec<TankInfo>,
    index: HashMap<String, usize>,
    library: SpeciesLibrary,
    allowed_hosts: Vec<String>,
    open_reads: bool,
}

/// Shared by every handler; cheap to clone.
#[derive(Clone)]
pub struct AppState {
    inner: Arc<Inner>,
}

impl std::fmt::Debug for AppState {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("AppState")
            .field("db", &self.inner.db)
            .field("tanks", &self.inner.tanks.len())
            .field("token", &self.inner.token.as_ref().map(|_| "<set>"))
            .finish()
    }
}

impl AppState {
    /// `profiles[i]` is the effective profile of `config.tanks[i]`; `library` answers `species` in plans;
    /// `token` is the resolved bearer token (`None`: changes are refused).
    pub fn new(
        config: &Config,
        profiles: &[Option<SpeciesProfile>],
        library: SpeciesLibrary,
        live: LiveView,
        token: Option<Secret>,
    ) -> Self {
        let tanks: Vec<TankInfo> = config
            .tanks
            .iter()
            .enumerate()
            .map(|(i, t)| {
                TankInfo::new(
                    t,
                    profiles.get(i).and_then(Option::as_ref),
                    config.http.stale_after_s,
                )
            })
            .collect();
        let index = tanks.iter().enumerate().map(|(i, t)| (t.id.clone(), i)).collect();
        Self {
            inner: Arc::new(Inner {
                live,
                db: Db::new(&config.storage.path),
                token,
                token_source: config.http.describe_token_source(),
                tanks,
                index,
                library,
                allowed_hosts: config.http.allowed_hosts.clone(),
                open_reads: config.http.open_reads,
            }),
        }
    }

    /// Host names besides IP addresses and `localhost` that requests may name (`[http] allowed_hosts`).
    pub fn allowed_hosts(&self) -> &[String] {
        &self.inner.allowed_hosts
    }

    /// Whether reads from other hosts need no token (`[http] open_reads`).
    pub fn open_reads(&self) -> bool {
        self.inner.open_reads
    }

    pub fn live(&self) -> &LiveView {
        &self.inner.live
    }

    pub fn db(&self) -> &Db {
        &self.inner.db
    }

    /// The configured bearer token.
    pub fn token(&self) -> Option<&str> {
        self.inner.token.as_ref().map(Secret::expose)
    }

    /// Where the token is configured, in words.
    pub fn token_source(&self) -> &str {
        &self.inner.token_source
    }

    /// The configured tanks, in configuration order.
    pub fn tanks(&self) -> &[TankInfo] {
        &self.inner.tanks
    }

    pub fn tank(&self, id: &str) -> Option<&TankInfo> {
        self.inner.index.get(id).and_then(|&i| self.inner.tanks.get(i))
    }

    /// The species library plans look `species` up in.
    pub fn library(&self) -> &SpeciesLibrary {
        &self.inner.library
    }
}
