//! Writing a plan or a blend recipe as a text table, JSON or CSV.
use std::io::Write;

use anyhow::Context;

use crate::planner::{BlendBatch, Plan, StepKind};

fn cell(value: Option<f64>, decimals: usize) -> String {
    value.map_or_else(|| "-".to_owned(), |v| format!("{v:.decimals$}"))
}

/// The plan as a text table with its warnings, assumptions and caution.
pub fn write_table(out: &mut impl Write, plan: &Plan) -> anyhow::Result<()> {
    let a = &plan.assumptions;
    writeln!(
        out,
        "{} plan for {} L: SP {} to {} at {} °C, {} steps over {:.1} h ({} to {})",
        plan.method,
        a.tank_volume_l,
        plan.from_practical_salinity,
        plan.to_practical_salinity,
        a.temperature_c,
        plan.steps.len(),
        plan.total_duration_h,
        plan.start.format("%Y-%m-%d %H:%M UTC"),
        plan.end.format("%Y-%m-%d %H:%M UTC"),
    )?;
    let has = |f: fn(&crate::planner::Step) -> Option<f64>| plan.steps.iter().any(|s| f(s).is_some());
    let (drain, add, salt, flow) = (
        has(|s| s.drain_l),
        has(|s| s.add_l),
        has(|s| s.salt_kg),
        has(|s| s.flow_l_min),
    );
    let mut header = format!(
        "{:>4}  {:<17} {:>6}  {:<6} {:>7} {:>8} {:>8}",
        "step", "time (UTC)", "hours", "action", "from SP", "to SP", "mOsm/kg"
    );
    if drain {
        header += &format!(" {:>9}", "drain L");
    }
    if add {
        header += &format!(" {:>9}", "add L");
    }
    if salt {
        header += &format!(" {:>8}", "salt kg");
    }
    if flow {
        header += &format!(" {:>10}", "flow L/min");
    }
    header += &format!(" {:>11}", "water L sum");
    if salt {
        header += &format!(" {:>11}", "salt kg sum");
    }
    writeln!(out, "{header}")?;
    for s in &plan.steps {
        let action = match s.kind {
            StepKind::Change => "change",
            StepKind::Hold => "hold",
        };
        let mut row = format!(
            "{:>4}  {:<17} {:>6.2}  {:<6} {:>7.3} {:>8.3} {:>8.1}",
            s.index,
            s.time.format("%Y-%m-%d %H:%M"),
            s.duration_h,
            action,
            s.from_practical_salinity,
            s.setpoint_practical_salinity,
            s.setpoint_osmolality_mosm_kg
        );
        if drain {
            row += &format!(" {:>9}", cell(s.drain_l, 1));
        }
        if add {
            row += &format!(" {:>9}", cell(s.add_l, 1));
        }
        if salt {
            row += &format!(" {:>8}", cell(s.salt_kg, 2));
        }
        if flow {
            row += &format!(" {:>10}", cell(s.flow_l_min, 2));
        }
        row += &format!(" {:>11.1}", s.cumulative_water_l);
        if salt {
            row += &format!(" {:>11}", cell(s.cumulative_salt_kg, 2));
        }
        writeln!(out, "{row}")?;
    }
    write!(out, "totals: water {:.1} L", plan.totals.water_l)?;
    if let Some(d) = plan.totals.drain_l {
        write!(out, ", drained {d:.1} L")?;
    }
    if let Some(s) = plan.totals.salt_kg {
        write!(out, ", salt {s:.2} kg")?;
    }
    writeln!(out)?;
    for w in &plan.warnings {
        writeln!(out, "warning: {}", w.message)?;
    }
    writeln!(
        out,
        "assumptions: tank {:.2} kg/m³ at the start, {:.2} kg/m³ at the target; added water SP {} at {:.2} kg/m³ \
         (EOS-80, {} °C); shape rate {:.4} {}",
        a.start_density_kg_m3,
        a.target_density_kg_m3,
        a.added_water_practical_salinity,
        a.added_water_density_kg_m3,
        a.temperature_c,
        a.shape_rate,
        shape_unit(plan),
    )?;
    for note in &a.notes {
        writeln!(out, "  - {note}")?;
    }
    writeln!(out, "caution: {}", plan.caution)?;
    Ok(())
}

fn shape_unit(plan: &Plan) -> &'static str {
    match plan.assumptions.ramp.shape {
        crate::planner::RampShape::LinearSalinity => "SP/h",
        crate::planner::RampShape::Proportional => "%/h",
        crate::planner::RampShape::LinearOsmolality => "mOsm/kg per h",
    }
}

/// The steps as CSV (one row per step; empty cells where a quantity does not apply).
pub fn write_csv(out: impl Write, plan: &Plan) -> anyhow::Result<()> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record([
        "step",
        "time",
        "duration_h",
        "kind",
        "from_practical_salinity",
        "setpoint_practical_salinity",
        "setpoint_osmolality_mOsm_kg",
        "drain_L",
        "add_L",
        "salt_kg",
        "flow_L_min",
        "cumulative_water_L",
        "cumulative_salt_kg",
    ])?;
    let opt = |v: Option<f64>| v.map_or_else(String::new, |v| v.to_string());
    for s in &plan.steps {
        w.write_record([
            s.index.to_string(),
            s.time.to_rfc3339(),
            s.duration_h.to_string(),
            match s.kind {
                StepKind::Change => "change".to_owned(),
                StepKind::Hold => "hold".to_owned(),
            },
            s.from_practical_salinity.to_string(),
            s.setpoint_practical_salinity.to_string(),
            s.setpoint_osmolality_mosm_kg.to_string(),
            opt(s.drain_l),
            opt(s.add_l),
            opt(s.salt_kg),
            opt(s.flow_l_min),
            s.cumulative_water_l.to_string(),
            opt(s.cumulative_salt_kg),
        ])?;
    }
    w.flush().context("writing CSV")?;
    Ok(())
}

/// A blend recipe as text.
pub fn write_blend_table(out: &mut impl Write, b: &BlendBatch) -> anyhow::Result<()> {
    writeln!(
        out,
        "blend {} L at SP {} ({:.1} mOsm/kg) at {} °C:",
        b.batch_volume_l, b.target_practical_salinity, b.target_osmolality_mosm_kg, b.temperature_c
    )?;
    writeln!(
        out,
        "  source A (SP {}): {:.1} L",
        b.source_a_practical_salinity, b.source_a_l
    )?;
    writeln!(
        out,
        "  source B (SP {}): {:.1} L",
        b.source_b_practical_salinity, b.source_b_l
    )?;
    writeln!(
        out,
        "assumptions: densities {:.2}, {:.2} and {:.2} kg/m³ (EOS-80); both sources at the batch temperature; \
         volumes add by mass, not by litres",
        b.density_a_kg_m3, b.density_b_kg_m3, b.density_batch_kg_m3
    )?;
    writeln!(out, "caution: {}", b.caution)?;
    Ok(())
}

/// A blend recipe as one CSV row.
pub fn write_blend_csv(out: impl Write, b: &BlendBatch) -> anyhow::Result<()> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record([
        "batch_volume_L",
        "target_practical_salinity",
        "target_osmolality_mOsm_kg",
        "source_a_practical_salinity",
        "source_a_L",
        "source_b_practical_salinity",
        "source_b_L",
    ])?;
    w.write_record([
        b.batch_volume_l.to_string(),
        b.target_practical_salinity.to_string(),
        b.target_osmolality_mosm_kg.to_string(),
        b.source_a_practical_salinity.to_string(),
        b.source_a_l.to_string(),
        b.source_b_practical_salinity.to_string(),
        b.source_b_l.to_string(),
    ])?;
    w.flush().context("writing CSV")?;
    Ok(())
}
