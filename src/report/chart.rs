//! The frontier as an SVG chart: total ops and per-slice peak against the
//! number of slices, with the budget drawn as a line.

use plotters::prelude::*;

use crate::slicing::FrontierRow;

/// Draws the frontier. x: log2 slices; left y: log2 total ops; right y:
/// log2 per-slice peak bytes, with the per-slice budget as a dashed line.
pub fn frontier_svg(
    rows: &[FrontierRow],
    per_slice_budget_bytes: f64,
    title: &str,
) -> Result<String, String> {
    if rows.is_empty() {
        return Err("the frontier is empty; nothing to draw".into());
    }
    let xs: Vec<f64> = rows.iter().map(|r| r.slices_log2).collect();
    let ops: Vec<f64> = rows.iter().map(|r| r.total_ops_log2).collect();
    let peaks: Vec<f64> = rows
        .iter()
        .map(|r| r.per_slice_peak_bytes.max(1.0).log2())
        .collect();
    let budget = per_slice_budget_bytes.max(1.0).log2();
    let span = |v: &[f64], extra: f64| {
        let lo = v.iter().copied().fold(f64::INFINITY, f64::min).min(extra);
        let hi = v
            .iter()
            .copied()
            .fold(f64::NEG_INFINITY, f64::max)
            .max(extra);
        (lo.floor() - 1.0, hi.ceil() + 1.0)
    };
    let (x0, x1) = span(&xs, 0.0);
    let (o0, o1) = span(&ops, ops[0]);
    let (p0, p1) = span(&peaks, budget);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (800, 480)).into_drawing_area();
        let e = |err: DrawingAreaErrorKind<_>| format!("cannot draw the chart: {err:?}");
        root.fill(&WHITE).map_err(e)?;
        let size = caption_size(title);
        let mut chart = ChartBuilder::on(&root)
            .caption(title, ("sans-serif", size))
            .margin(12)
            .x_label_area_size(40)
            .y_label_area_size(60)
            .right_y_label_area_size(60)
            .build_cartesian_2d(x0.max(0.0)..x1, o0..o1)
            .map_err(e)?
            .set_secondary_coord(x0.max(0.0)..x1, p0..p1);
        chart
            .configure_mesh()
            .x_desc("log2 slices")
            .y_desc("log2 total ops")
            .draw()
            .map_err(e)?;
        chart
            .configure_secondary_axes()
            .y_desc("log2 per-slice peak bytes")
            .draw()
            .map_err(e)?;
        let blue = RGBColor(31, 119, 180);
        let orange = RGBColor(214, 96, 20);
        chart
            .draw_series(LineSeries::new(
                xs.iter().copied().zip(ops.iter().copied()),
                blue.stroke_width(2),
            ))
            .map_err(e)?
            .label("total ops (log2)")
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], blue));
        chart
            .draw_series(
                xs.iter()
                    .zip(&ops)
                    .map(|(&x, &y)| Circle::new((x, y), 3, blue.filled())),
            )
            .map_err(e)?;
        // The chosen slice set: a ring around its point, in the legend too.
        let chosen: Vec<(f64, f64)> = rows
            .iter()
            .zip(xs.iter().zip(&ops))
            .filter(|(r, _)| r.chosen)
            .map(|(_, (&x, &y))| (x, y))
            .collect();
        chart
            .draw_series(
                chosen
                    .iter()
                    .map(|&(x, y)| Circle::new((x, y), 8, BLACK.stroke_width(2))),
            )
            .map_err(e)?
            .label("chosen slice set")
            .legend(|(x, y)| Circle::new((x + 10, y), 5, BLACK.stroke_width(2)));
        chart
            .draw_secondary_series(LineSeries::new(
                xs.iter().copied().zip(peaks.iter().copied()),
                orange.stroke_width(2),
            ))
            .map_err(e)?
            .label("per-slice peak bytes (log2)")
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], orange));
        chart
            .draw_secondary_series(DashedLineSeries::new(
                vec![(x0.max(0.0), budget), (x1, budget)],
                6,
                4,
                BLACK.stroke_width(1),
            ))
            .map_err(e)?
            .label("per-slice budget")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLACK));
        chart
            .configure_series_labels()
            .background_style(WHITE.mix(0.8))
            .border_style(BLACK)
            .draw()
            .map_err(e)?;
        root.present().map_err(e)?;
    }
    Ok(svg)
}

/// The caption's font size: it shrinks so that a long network name still
/// fits the 800-pixel width of every chart (about 0.55 em per character of
/// sans-serif), between 9 and 20 pixels.
pub(crate) fn caption_size(title: &str) -> f64 {
    (760.0 / (0.55 * title.chars().count().max(1) as f64)).clamp(9.0, 20.0)
}
