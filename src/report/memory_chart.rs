//! Memory over the contraction of one slice, as SVG and CSV: bytes alive
//! at each step of the plan's traversal, split into inputs, intermediates
//! and workspace, with the per-slice budget and the peak marked. This is
//! the picture of why a plan fits or not.
//!
//! The figures are the cost model's ([`crate::cost::trace::live_trace`]
//! under the executor's rule): the chart shows what the prediction is
//! made of, step by step.

use std::fmt::Write as _;

use plotters::prelude::*;
use serde::Serialize;

use crate::cost::bytes::bytes_human;
use crate::cost::trace::LiveStep;

/// One step in bytes.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct MemoryPoint {
    /// Position in the traversal (0 = first contraction).
    pub step: usize,
    /// The merge run; `None` for the final permute of the result.
    pub merge: Option<usize>,
    /// Input tensors live (copied in at first use).
    pub inputs_bytes: f64,
    /// Intermediates live before the step.
    pub intermediates_bytes: f64,
    /// The step's operand copies and result.
    pub workspace_bytes: f64,
}

impl MemoryPoint {
    /// All of it.
    pub fn total_bytes(&self) -> f64 {
        self.inputs_bytes + self.intermediates_bytes + self.workspace_bytes
    }
}

/// Memory step by step for one slice.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MemoryProfile {
    /// The steps.
    pub points: Vec<MemoryPoint>,
    /// The per-slice budget (the plan's budget less inputs and output, over
    /// the slices at once), when the plan has a budget.
    pub budget_bytes: Option<f64>,
    /// The step where memory peaks.
    pub peak_step: usize,
}

impl MemoryProfile {
    /// The profile of `steps` (in elements) with elements of `bytes` bytes.
    pub fn new(steps: &[LiveStep], bytes: f64, budget_bytes: Option<f64>) -> MemoryProfile {
        let points: Vec<MemoryPoint> = steps
            .iter()
            .enumerate()
            .map(|(i, s)| MemoryPoint {
                step: i,
                merge: s.merge,
                inputs_bytes: s.inputs * bytes,
                intermediates_bytes: s.intermediates * bytes,
                workspace_bytes: s.workspace * bytes,
            })
            .collect();
        let peak_step = points
            .iter()
            .enumerate()
            .max_by(|a, b| a.1.total_bytes().total_cmp(&b.1.total_bytes()))
            .map_or(0, |(i, _)| i);
        MemoryProfile {
            points,
            budget_bytes,
            peak_step,
        }
    }

    /// The peak in bytes.
    pub fn peak_bytes(&self) -> f64 {
        self.points
            .get(self.peak_step)
            .map_or(0.0, MemoryPoint::total_bytes)
    }

    /// One row per step: `step,merge,inputs_bytes,intermediates_bytes,workspace_bytes,total_bytes,budget_bytes`.
    pub fn csv(&self) -> String {
        let mut s = String::from(
            "step,merge,inputs_bytes,intermediates_bytes,workspace_bytes,total_bytes,budget_bytes\n",
        );
        for p in &self.points {
            let _ = writeln!(
                s,
                "{},{},{},{},{},{},{}",
                p.step,
                p.merge
                    .map_or_else(|| "result".to_string(), |m| m.to_string()),
                p.inputs_bytes,
                p.intermediates_bytes,
                p.workspace_bytes,
                p.total_bytes(),
                self.budget_bytes
                    .map_or_else(String::new, |b| b.to_string())
            );
        }
        s
    }

    /// The chart: stacked lines of inputs, + intermediates, + workspace
    /// (the total, with a point per step), the budget as a dashed line and
    /// the peak ringed and labelled.
    pub fn svg(&self, title: &str) -> Result<String, String> {
        if self.points.is_empty() {
            return Err("the plan has no contraction step; nothing to draw".into());
        }
        let n = self.points.len();
        let top = self
            .peak_bytes()
            .max(self.budget_bytes.unwrap_or(0.0))
            .max(1.0)
            * 1.12;
        let (scale, unit) = unit_of(top);
        let xs = |i: usize| i as f64;
        let mut svg = String::new();
        {
            let root = SVGBackend::with_string(&mut svg, (800, 480)).into_drawing_area();
            let e = |err: DrawingAreaErrorKind<_>| format!("cannot draw the chart: {err:?}");
            root.fill(&WHITE).map_err(e)?;
            let size = super::chart::caption_size(title);
            let mut chart = ChartBuilder::on(&root)
                .caption(title, ("sans-serif", size))
                .margin(12)
                .x_label_area_size(40)
                .y_label_area_size(70)
                .build_cartesian_2d(-0.5..(n as f64 - 0.5), 0.0..top / scale)
                .map_err(e)?;
            chart
                .configure_mesh()
                .x_label_formatter(&|x| format!("{x:.0}"))
                .x_desc("step of the traversal (last: result permuted into output order)")
                .y_desc(format!("{unit} alive in one slice"))
                .draw()
                .map_err(e)?;
            let green = RGBColor(44, 160, 44);
            let blue = RGBColor(31, 119, 180);
            let orange = RGBColor(214, 96, 20);
            let layers: [Layer; 3] = [
                ("inputs", green, |p| p.inputs_bytes),
                ("+ intermediates", blue, |p| {
                    p.inputs_bytes + p.intermediates_bytes
                }),
                (
                    "+ workspace (operand copies, result)",
                    orange,
                    MemoryPoint::total_bytes,
                ),
            ];
            for (label, color, value) in layers {
                chart
                    .draw_series(LineSeries::new(
                        self.points.iter().map(|p| (xs(p.step), value(p) / scale)),
                        color.stroke_width(2),
                    ))
                    .map_err(e)?
                    .label(label)
                    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], color));
            }
            chart
                .draw_series(self.points.iter().map(|p| {
                    Circle::new((xs(p.step), p.total_bytes() / scale), 2, orange.filled())
                }))
                .map_err(e)?;
            if let Some(b) = self.budget_bytes {
                chart
                    .draw_series(DashedLineSeries::new(
                        vec![(-0.5, b / scale), (n as f64 - 0.5, b / scale)],
                        6,
                        4,
                        BLACK.stroke_width(1),
                    ))
                    .map_err(e)?
                    .label(format!("per-slice budget {}", bytes_human(b)))
                    .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLACK));
            }
            let peak = self.peak_bytes();
            let at = (xs(self.peak_step), peak / scale);
            chart
                .draw_series(std::iter::once(Circle::new(at, 7, RED.stroke_width(2))))
                .map_err(e)?
                .label(format!(
                    "peak {} at step {}",
                    bytes_human(peak),
                    self.peak_step
                ))
                .legend(|(x, y)| Circle::new((x + 10, y), 5, RED.stroke_width(2)));
            chart
                .configure_series_labels()
                .position(SeriesLabelPosition::UpperLeft)
                .background_style(WHITE.mix(0.8))
                .border_style(BLACK)
                .draw()
                .map_err(e)?;
            root.present().map_err(e)?;
        }
        Ok(svg)
    }
}

/// One stacked line: its label, colour and height at a point.
type Layer = (&'static str, RGBColor, fn(&MemoryPoint) -> f64);

/// A binary unit for an axis reaching `top` bytes: (bytes per unit, name).
fn unit_of(top: f64) -> (f64, &'static str) {
    const UNITS: [&str; 6] = ["bytes", "KiB", "MiB", "GiB", "TiB", "PiB"];
    let mut k = 0;
    while k + 1 < UNITS.len() && top >= 1024f64.powi(k as i32 + 1) * 2.0 {
        k += 1;
    }
    (1024f64.powi(k as i32), UNITS[k])
}
