//! `POST /api/plan`: a plan from the page's form (PlanForm), exactly as `halotank plan --format json`
//! prints it; changes nothing, so it needs no token. With `tank`, the tank's volume, species profile,
//! current salinity and temperature fill what the form leaves out. Also the form's mapping onto the
//! planner's shared [`PlanInputs`], used by `POST /api/schedules`.
use axum::body::Bytes;
use axum::extract::rejection::BytesRejection;
use axum::extract::State;
use axum::Json;
use chrono::{DateTime, SubsecRound, Utc};
use serde::Deserialize;
use serde_json::Value;

use super::body;
use super::error::{ApiError, ApiResult};
use super::params::parse_time;
use super::state::AppState;
use super::tanks::unknown_tank;
use crate::planner::salt::DEFAULT_DISSOLVE_WATER_L_PER_KG;
use crate::planner::{
    blend_batch, build_request, make_plan, BlendRequest, Hold, InputsError, MethodChoice, PlanInputs,
    PlanRequest, Ramp, RampShape, RateLimits, RequiredInput,
};
use crate::species::SpeciesProfile;

/// `method` of the form.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum FormMethod {
    Exchange,
    Flow,
    Salt,
    Blend,
}

/// `shape` of the form.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum FormShape {
    Linear,
    Proportional,
    Osmolality,
}

/// A hold: `{"practical_salinity": 12, "hours": 12}`.
#[derive(Debug, Clone, Copy, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FormHold {
    pub practical_salinity: f64,
    pub hours: f64,
}

/// The plan form; the fields mirror the options of `halotank plan`.
#[derive(Debug, Clone, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct PlanForm {
    /// A configured tank: fills volume, species, current salinity and temperature when not given.
    pub tank: Option<String>,
    #[serde(rename = "volume_L")]
    pub volume_l: Option<f64>,
    /// The tank's practical salinity now.
    pub from: Option<f64>,
    /// Target practical salinity (for blend: the batch's).
    pub to: f64,
    pub species: Option<String>,
    #[serde(rename = "temperature_C")]
    pub temperature_c: Option<f64>,
    pub method: FormMethod,
    pub source_practical_salinity: Option<f64>,
    /// Hours between steps (default 1).
    pub interval_h: Option<f64>,
    pub shape: Option<FormShape>,
    /// The shape's own rate in its unit (SP/h, %/h, mOsm/kg per hour).
    pub rate: Option<f64>,
    pub max_rate_sp_per_h: Option<f64>,
    pub max_rate_percent_per_h: Option<f64>,
    pub slow_below_sp: Option<f64>,
    pub slow_rate_sp_per_h: Option<f64>,
    pub slow_rate_percent_per_h: Option<f64>,
    #[serde(default)]
    pub holds: Vec<FormHold>,
    #[serde(rename = "max_flow_L_min")]
    pub max_flow_l_min: Option<f64>,
    pub top_up_practical_salinity: Option<f64>,
    #[serde(rename = "dissolve_water_L_per_kg")]
    pub dissolve_water_l_per_kg: Option<f64>,
    pub optimum_practical_salinity: Option<[f64; 2]>,
    pub tolerance_practical_salinity: Option<[f64; 2]>,
    /// RFC 3339 time of the first step, or `now` (default).
    pub start: Option<String>,
    /// Blend: the two sources and the batch volume.
    pub source_a_practical_salinity: Option<f64>,
    pub source_b_practical_salinity: Option<f64>,
    #[serde(rename = "batch_volume_L")]
    pub batch_volume_l: Option<f64>,
}

fn range(name: &str, r: Option<[f64; 2]>) -> ApiResult<Option<(f64, f64)>> {
    match r {
        Some([lo, hi]) if lo > hi || lo < 0.0 => Err(ApiError::bad_request(format!(
            "`{name}` must be [low, high] with 0 <= low <= high"
        ))),
        Some([lo, hi]) => Ok(Some((lo, hi))),
        None => Ok(None),
    }
}

/// The tank's latest practical salinity and temperature: the live view, else the database.
async fn latest_of(state: &AppState, tank: &str) -> ApiResult<Option<(f64, f64)>> {
    let live = state.live().read(|d| {
        d.tanks
            .get(tank)
            .map(|(_, s)| (s.derived.practical_salinity, s.temperature_c))
    });
    if live.is_some() {
        return Ok(live);
    }
    let tank = tank.to_string();
    state
        .db()
        .read(move |r| {
            Ok(r.latest_for_tank(&tank)?
                .map(|row| (row.derived.practical_salinity, row.temperature_c)))
        })
        .await
}

/// The planner's request for a form (not a blend), with what the tank fills in.
pub async fn request_for_form(
    state: &AppState,
    form: &PlanForm,
    now: DateTime<Utc>,
) -> ApiResult<PlanRequest> {
    let method = match form.method {
        FormMethod::Exchange => MethodChoice::Exchange,
        FormMethod::Flow => MethodChoice::Flow,
        FormMethod::Salt => MethodChoice::Salt,
        FormMethod::Blend => {
            return Err(ApiError::bad_request(
                "`method: blend` makes a batch, not a plan over time; it cannot be scheduled",
            ))
        }
    };
    let tank = match &form.tank {
        Some(id) => Some(state.tank(id).ok_or_else(|| unknown_tank(id))?),
        None => None,
    };
    let latest = match (tank, form.from, form.temperature_c) {
        (Some(t), None, _) | (Some(t), _, None) => latest_of(state, &t.id).await?,
        _ => None,
    };
    let species: Option<SpeciesProfile> = match &form.species {
        Some(id) => Some(state.library().get(id).cloned().ok_or_else(|| {
            ApiError::bad_request(format!(
                "unknown species `{id}`; known: {}",
                state.library().ids().collect::<Vec<_>>().join(", ")
            ))
        })?),
        None => tank.and_then(|t| t.profile.clone()),
    };
    let temperature_c = form.temperature_c.or(latest.map(|(_, t)| t)).ok_or_else(|| {
        ApiError::bad_request("`temperature_C` is required (or a `tank` with a stored reading)")
    })?;
    let start = match form.start.as_deref().map(str::trim) {
        None | Some("now") => now,
        Some(text) => parse_time("start", text)?,
    };
    let shape = match form.shape.unwrap_or(FormShape::Linear) {
        FormShape::Linear => RampShape::LinearSalinity,
        FormShape::Proportional => RampShape::Proportional,
        FormShape::Osmolality => RampShape::LinearOsmolality,
    };
    let inputs = PlanInputs {
        tank_volume_l: form.volume_l.or(tank.map(|t| t.volume_l)),
        from_practical_salinity: form.from.or(latest.map(|(sp, _)| sp)),
        to_practical_salinity: form.to,
        temperature_c,
        start,
        interval_h: form.interval_h.unwrap_or(1.0),
        method,
        source_practical_salinity: form.source_practical_salinity,
        max_flow_l_min: form.max_flow_l_min,
        top_up_practical_salinity: form.top_up_practical_salinity.unwrap_or(0.0),
        dissolve_water_l_per_kg: form
            .dissolve_water_l_per_kg
            .unwrap_or(DEFAULT_DISSOLVE_WATER_L_PER_KG),
        ramp: Ramp {
            shape,
            rate: form.rate,
        },
        rate_limits: RateLimits {
            max_rate_sp_per_h: form.max_rate_sp_per_h,
            max_rate_percent_per_h: form.max_rate_percent_per_h,
            slow_below_sp: form.slow_below_sp,
            slow_rate_sp_per_h: form.slow_rate_sp_per_h,
            slow_rate_percent_per_h: form.slow_rate_percent_per_h,
        },
        optimum: range("optimum_practical_salinity", form.optimum_practical_salinity)?,
        tolerance: range("tolerance_practical_salinity", form.tolerance_practical_salinity)?,
        holds: form
            .holds
            .iter()
            .map(|h| Hold {
                practical_salinity: h.practical_salinity,
                duration_h: h.hours,
            })
            .collect(),
    };
    build_request(&inputs, species.as_ref()).map_err(|err| match err {
        InputsError::Missing { input, method } => {
            let field = match input {
                RequiredInput::Volume => "`volume_L` (or a configured `tank`)",
                RequiredInput::FromSalinity => "`from` (or a `tank` with a stored reading)",
                RequiredInput::SourceSalinity => "`source_practical_salinity`",
            };
            match method {
                Some(m) => ApiError::bad_request(format!("method {m} needs {field}")),
                None => ApiError::bad_request(format!("a plan needs {field}")),
            }
        }
    })
}

/// `POST /api/plan`.
pub async fn plan(
    State(state): State<AppState>,
    body: Result<Bytes, BytesRejection>,
) -> ApiResult<Json<Value>> {
    let form: PlanForm = body::json(&body::bytes(body)?)?;
    let now = Utc::now().trunc_subsecs(0);
    let json = |v: Result<Value, serde_json::Error>| {
        v.map_err(|e| ApiError::internal(format!("cannot write JSON: {e}")))
    };
    if form.method == FormMethod::Blend {
        let need = |v: Option<f64>, name: &str| {
            v.ok_or_else(|| ApiError::bad_request(format!("method blend needs `{name}`")))
        };
        let temperature_c = need(form.temperature_c, "temperature_C")?;
        let batch = blend_batch(&BlendRequest {
            batch_volume_l: need(form.batch_volume_l, "batch_volume_L")?,
            target_practical_salinity: form.to,
            source_a_practical_salinity: need(
                form.source_a_practical_salinity,
                "source_a_practical_salinity",
            )?,
            source_b_practical_salinity: need(
                form.source_b_practical_salinity,
                "source_b_practical_salinity",
            )?,
            temperature_c,
        })
        .map_err(|e| ApiError::bad_request(e.to_string()))?;
        return json(serde_json::to_value(&batch)).map(Json);
    }
    let request = request_for_form(&state, &form, now).await?;
    let plan = make_plan(&request).map_err(|e| ApiError::bad_request(e.to_string()))?;
    json(serde_json::to_value(&plan)).map(Json)
}
