//! The `halotank plan --chart` picture: planned salinity (left axis) and osmolality (right axis) against
//! hours from the start, with the optimum band shaded and the tolerance limits drawn, as SVG (plotters).
use plotters::prelude::*;

use crate::planner::water::osmolality_mosm_kg;
use crate::planner::{Plan, PlanError, SalinityLimits};

/// Picture size, pixels.
const SIZE: (u32, u32) = (960, 540);

const SALINITY_COLOUR: RGBColor = RGBColor(20, 70, 140);
const OSMOLALITY_COLOUR: RGBColor = RGBColor(190, 90, 20);
const OPTIMUM_COLOUR: RGBColor = RGBColor(120, 190, 120);
const TOLERANCE_COLOUR: RGBColor = RGBColor(170, 40, 40);

/// Why the chart could not be drawn.
#[derive(Debug, thiserror::Error)]
pub enum ChartError {
    #[error("chart drawing failed: {0}")]
    Draw(String),
    #[error(transparent)]
    Plan(#[from] PlanError),
}

fn draw_err<E: std::fmt::Debug>(e: E) -> ChartError {
    ChartError::Draw(format!("{e:?}"))
}

/// (hours, SP) corners of the planned setpoint: a jump at each step for exchange and salt, a ramp through
/// each step for flow-through.
pub fn setpoint_path(plan: &Plan) -> Vec<(f64, f64)> {
    let ramps = plan.method == "flow";
    let mut points = vec![(0.0, plan.from_practical_salinity)];
    for step in &plan.steps {
        let start_h = (step.time - plan.start).num_milliseconds() as f64 / 3.6e6;
        let end_h = start_h + step.duration_h;
        if !ramps {
            points.push((start_h, step.setpoint_practical_salinity));
        }
        points.push((end_h, step.setpoint_practical_salinity));
    }
    points
}

/// The chart as an SVG document.
pub fn plan_chart_svg(plan: &Plan, limits: Option<&SalinityLimits>) -> Result<String, ChartError> {
    let t = plan.assumptions.temperature_c;
    let salinity_path = setpoint_path(plan);
    let osmolality_path = salinity_path
        .iter()
        .map(|&(h, s)| Ok((h, osmolality_mosm_kg(s, t)?)))
        .collect::<Result<Vec<_>, PlanError>>()?;
    let hours = plan.total_duration_h.max(1e-3);
    let mut top_sp = plan.from_practical_salinity.max(plan.to_practical_salinity);
    if let Some(l) = limits {
        // Show the optimum band, and the upper tolerance limit when it is not far above the plan.
        top_sp = top_sp.max(l.optimum.1);
        if l.tolerance.1 <= 1.5 * top_sp {
            top_sp = top_sp.max(l.tolerance.1);
        }
    }
    let top_sp = (top_sp * 1.1).max(1.0);
    let top_osm = osmolality_mosm_kg(top_sp, t)?;

    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, SIZE).into_drawing_area();
        root.fill(&WHITE).map_err(draw_err)?;
        let caption = format!(
            "{} plan: SP {} to {} at {} °C, {:.1} h",
            plan.method, plan.from_practical_salinity, plan.to_practical_salinity, t, plan.total_duration_h
        );
        let mut chart = ChartBuilder::on(&root)
            .caption(caption, ("sans-serif", 22))
            .margin(16)
            .x_label_area_size(44)
            .y_label_area_size(56)
            .right_y_label_area_size(64)
            .build_cartesian_2d(0.0..hours, 0.0..top_sp)
            .map_err(draw_err)?
            .set_secondary_coord(0.0..hours, 0.0..top_osm);
        chart
            .configure_mesh()
            .x_desc("hours from start")
            .y_desc("practical salinity")
            .light_line_style(WHITE.mix(0.0))
            .draw()
            .map_err(draw_err)?;
        chart
            .configure_secondary_axes()
            .y_desc("osmolality, mOsm/kg")
            .draw()
            .map_err(draw_err)?;
        if let Some(l) = limits {
            let (lo, hi) = (l.optimum.0.min(top_sp), l.optimum.1.min(top_sp));
            chart
                .draw_series(std::iter::once(Rectangle::new(
                    [(0.0, lo), (hours, hi)],
                    OPTIMUM_COLOUR.mix(0.25).filled(),
                )))
                .map_err(draw_err)?
                .label(format!("optimum SP {} to {}", l.optimum.0, l.optimum.1))
                .legend(|(x, y)| {
                    Rectangle::new([(x, y - 5), (x + 18, y + 5)], OPTIMUM_COLOUR.mix(0.4).filled())
                });
            let edges: Vec<f64> = [l.tolerance.0, l.tolerance.1]
                .into_iter()
                .filter(|&edge| edge > 0.0 && edge < top_sp)
                .collect();
            for (i, &edge) in edges.iter().enumerate() {
                let series = chart
                    .draw_series(DashedLineSeries::new(
                        [(0.0, edge), (hours, edge)],
                        6,
                        4,
                        TOLERANCE_COLOUR.stroke_width(1),
                    ))
                    .map_err(draw_err)?;
                if i == 0 {
                    series
                        .label(format!("tolerance SP {} to {}", l.tolerance.0, l.tolerance.1))
                        .legend(|(x, y)| {
                            PathElement::new([(x, y), (x + 18, y)], TOLERANCE_COLOUR.stroke_width(1))
                        });
                }
            }
        }
        chart
            .draw_series(LineSeries::new(salinity_path, SALINITY_COLOUR.stroke_width(3)))
            .map_err(draw_err)?
            .label("setpoint, practical salinity (left)")
            .legend(|(x, y)| PathElement::new([(x, y), (x + 18, y)], SALINITY_COLOUR.stroke_width(3)));
        chart
            .draw_secondary_series(LineSeries::new(
                osmolality_path,
                OSMOLALITY_COLOUR.stroke_width(2),
            ))
            .map_err(draw_err)?
            .label("setpoint, osmolality mOsm/kg (right)")
            .legend(|(x, y)| PathElement::new([(x, y), (x + 18, y)], OSMOLALITY_COLOUR.stroke_width(2)));
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::LowerRight)
            .background_style(WHITE.mix(0.85))
            .border_style(BLACK.mix(0.4))
            .draw()
            .map_err(draw_err)?;
        root.present().map_err(draw_err)?;
    }
    Ok(svg)
}
