//! Writing schedules as text: the one-line summary of `schedule list`, and the step table with progress
//! of `schedule show`.
use std::io::Write;

use chrono::{DateTime, Utc};

use crate::planner::{Step, StepKind};
use crate::schedule::{progress, timeline, Progress, Schedule};

fn minute(t: DateTime<Utc>) -> String {
    t.format("%Y-%m-%d %H:%M").to_string()
}

/// "2 ahead", "1 behind" or "on time".
pub fn ahead_behind(p: &Progress) -> String {
    match p.steps_ahead {
        0 => "on time".to_owned(),
        n if n > 0 => format!("{n} step{} ahead", if n == 1 { "" } else { "s" }),
        n => format!("{} step{} behind", -n, if n == -1 { "" } else { "s" }),
    }
}

/// What a step asks staff to do, with its quantities.
pub fn step_action(step: &Step) -> String {
    if step.kind == StepKind::Hold {
        return format!("hold at SP {:.2}", step.setpoint_practical_salinity);
    }
    let mut parts = Vec::new();
    if let Some(d) = step.drain_l.filter(|&d| d > 0.0) {
        parts.push(format!("drain {d:.1} L"));
    }
    if let Some(s) = step.salt_kg.filter(|&s| s > 0.0) {
        parts.push(format!("dissolve {s:.2} kg salt"));
    }
    if let Some(a) = step.add_l.filter(|&a| a > 0.0) {
        parts.push(format!("add {a:.1} L"));
    }
    if let Some(q) = step.flow_l_min {
        parts.push(format!("set inflow {q:.2} L/min"));
    }
    parts.push(format!("to reach SP {:.2}", step.setpoint_practical_salinity));
    parts.join(", ")
}

/// One line: id, tank, state, method, salinities, progress.
pub fn write_summary_line(out: &mut impl Write, s: &Schedule, now: DateTime<Utc>) -> anyhow::Result<()> {
    let p = progress(s, now);
    let finish = p.expected_finish.map_or_else(|| "-".to_owned(), minute);
    writeln!(
        out,
        "{:>4}  {:<12} {:<9} {:<8} SP {:>6.2} -> {:>6.2}  step {}/{}  {:<16} finish {}",
        s.id,
        s.tank_id,
        p.state,
        s.plan.method,
        s.plan.from_practical_salinity,
        s.plan.to_practical_salinity,
        p.steps_done,
        p.steps_total,
        if s.state.is_open() {
            ahead_behind(&p)
        } else {
            "-".to_owned()
        },
        finish
    )?;
    Ok(())
}

/// The progress lines: step n of m, setpoint now, next step, ahead or behind, expected finish.
pub fn write_progress(out: &mut impl Write, s: &Schedule, now: DateTime<Utc>) -> anyhow::Result<()> {
    let p = progress(s, now);
    writeln!(
        out,
        "progress at {} UTC: {} of {} steps done ({}), state {}",
        minute(now),
        p.steps_done,
        p.steps_total,
        ahead_behind(&p),
        p.state
    )?;
    let osm = p
        .setpoint_osmolality_mosm_kg
        .map_or_else(String::new, |o| format!(", {o:.0} mOsm/kg"));
    writeln!(out, "setpoint now: SP {:.2}{osm}", p.setpoint_practical_salinity)?;
    if let Some(next) = &p.next_step {
        let when = if next.overdue { "overdue since" } else { "due" };
        let action = s
            .plan
            .steps
            .get(next.step - 1)
            .map(step_action)
            .unwrap_or_default();
        writeln!(
            out,
            "next: step {} {when} {} UTC: {action}",
            next.step,
            minute(next.due)
        )?;
    }
    if p.paused_h >= 0.01 || p.late_h >= 0.01 {
        writeln!(
            out,
            "timeline moved {:.2} h by pauses and {:.2} h by lateness",
            p.paused_h, p.late_h
        )?;
    }
    if let Some(finish) = p.expected_finish {
        writeln!(out, "expected finish: {} UTC", minute(finish))?;
    }
    Ok(())
}

/// The schedule with its step table (planned and moved due times, done marks), progress, warnings and
/// the planner's caution.
pub fn write_show(out: &mut impl Write, s: &Schedule, now: DateTime<Utc>) -> anyhow::Result<()> {
    let plan = &s.plan;
    let a = &plan.assumptions;
    writeln!(
        out,
        "schedule {} on tank {}: {} plan for {} L, SP {} to {} at {} °C, created {} UTC",
        s.id,
        s.tank_id,
        plan.method,
        a.tank_volume_l,
        plan.from_practical_salinity,
        plan.to_practical_salinity,
        a.temperature_c,
        minute(s.created_at)
    )?;
    let due = timeline(s, now);
    writeln!(
        out,
        "{:>4}  {:<16}  {:<16}  {:>8} {:>8}  {:<22}  action",
        "step", "planned (UTC)", "due (UTC)", "to SP", "mOsm/kg", "done"
    )?;
    for (i, step) in plan.steps.iter().enumerate() {
        let done = s
            .steps_done
            .get(i)
            .map_or_else(|| "-".to_owned(), |d| format!("{} {}", minute(d.done_at), d.by));
        writeln!(
            out,
            "{:>4}  {:<16}  {:<16}  {:>8.3} {:>8.1}  {:<22}  {}",
            step.index,
            minute(step.time),
            due.get(i).map_or_else(|| "-".to_owned(), |&t| minute(t)),
            step.setpoint_practical_salinity,
            step.setpoint_osmolality_mosm_kg,
            done,
            step_action(step)
        )?;
    }
    write_progress(out, s, now)?;
    for w in &plan.warnings {
        writeln!(out, "warning: {}", w.message)?;
    }
    writeln!(out, "caution: {}", plan.caution)?;
    Ok(())
}
