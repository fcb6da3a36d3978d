//! Cost per step of one slice, as SVG and CSV: the multiply-adds of each
//! pairwise contraction in traversal order on a log scale, with the few
//! steps that carry most of the total labelled by their index count, so a
//! user sees whether a handful of contractions carry the cost.

use std::fmt::Write as _;

use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use serde::Serialize;

use crate::cost::time::Step;

/// Most steps labelled on the chart.
pub const MAX_LABELS: usize = 5;
/// Steps are labelled, largest first, until they carry this share of the
/// total (or [`MAX_LABELS`] are).
pub const LABEL_SHARE: f64 = 0.8;
/// A step is labelled only when it carries at least this share: when the
/// cost is spread evenly no step dominates, and none is labelled.
pub const MIN_LABEL_SHARE: f64 = 0.1;

/// One contraction in traversal order.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct StepCost {
    /// Position in the traversal.
    pub step: usize,
    /// The merge run.
    pub merge: usize,
    /// log2 of its multiply-adds.
    pub ops_log2: f64,
    /// Indices it multiplies over.
    pub indices: usize,
    /// Its share of the slice's total multiply-adds.
    pub share: f64,
}

/// The cost of every step of one slice.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StepCosts {
    /// The steps.
    pub steps: Vec<StepCost>,
    /// The steps labelled on the chart (positions in `steps`).
    pub dominant: Vec<usize>,
}

impl StepCosts {
    /// From the model's steps by merge number and the traversal `order`.
    pub fn new(by_merge: &[Step], order: &[usize]) -> StepCosts {
        // Shares of the steps shown (the merges of `order`).
        let total: f64 = order.iter().map(|&k| by_merge[k].ops_log2.exp2()).sum();
        let steps: Vec<StepCost> = order
            .iter()
            .enumerate()
            .map(|(i, &k)| StepCost {
                step: i,
                merge: k,
                ops_log2: by_merge[k].ops_log2,
                indices: by_merge[k].indices,
                share: if total > 0.0 {
                    by_merge[k].ops_log2.exp2() / total
                } else {
                    0.0
                },
            })
            .collect();
        let mut by_size: Vec<usize> = (0..steps.len()).collect();
        by_size.sort_by(|&a, &b| {
            steps[b]
                .ops_log2
                .total_cmp(&steps[a].ops_log2)
                .then(a.cmp(&b))
        });
        let mut dominant = Vec::new();
        let mut carried = 0.0;
        for i in by_size {
            if carried >= LABEL_SHARE
                || dominant.len() == MAX_LABELS
                || steps[i].share < MIN_LABEL_SHARE
            {
                break;
            }
            carried += steps[i].share;
            dominant.push(i);
        }
        dominant.sort_unstable();
        StepCosts { steps, dominant }
    }

    /// One row per step: `step,merge,ops_log2,ops,indices,share`.
    pub fn csv(&self) -> String {
        let mut s = String::from("step,merge,ops_log2,ops,indices,share\n");
        for p in &self.steps {
            let _ = writeln!(
                s,
                "{},{},{},{},{},{}",
                p.step,
                p.merge,
                p.ops_log2,
                p.ops_log2.exp2(),
                p.indices,
                p.share
            );
        }
        s
    }

    /// The chart: log2 multiply-adds per step as points joined by a line,
    /// dominant steps ringed and labelled "k idx, s%" (see
    /// [`MIN_LABEL_SHARE`]).
    pub fn svg(&self, title: &str) -> Result<String, String> {
        if self.steps.is_empty() {
            return Err("the plan has no contraction step; nothing to draw".into());
        }
        let n = self.steps.len();
        let hi = self
            .steps
            .iter()
            .map(|s| s.ops_log2)
            .fold(0.0f64, f64::max)
            .ceil()
            + 2.0;
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
                .y_label_area_size(60)
                .build_cartesian_2d(-0.5..(n as f64 - 0.5), 0.0..hi)
                .map_err(e)?;
            chart
                .configure_mesh()
                .x_label_formatter(&|x| format!("{x:.0}"))
                .x_desc("step of the traversal")
                .y_desc("log2 multiply-adds")
                .draw()
                .map_err(e)?;
            let blue = RGBColor(31, 119, 180);
            chart
                .draw_series(LineSeries::new(
                    self.steps.iter().map(|s| (s.step as f64, s.ops_log2)),
                    blue.mix(0.5).stroke_width(1),
                ))
                .map_err(e)?;
            chart
                .draw_series(
                    self.steps
                        .iter()
                        .map(|s| Circle::new((s.step as f64, s.ops_log2), 3, blue.filled())),
                )
                .map_err(e)?
                .label("one pairwise contraction")
                .legend(move |(x, y)| Circle::new((x + 10, y), 3, blue.filled()));
            let red = RGBColor(200, 30, 30);
            chart
                .draw_series(self.dominant.iter().map(|&i| {
                    let s = &self.steps[i];
                    Circle::new((s.step as f64, s.ops_log2), 7, red.stroke_width(2))
                }))
                .map_err(e)?
                .label(if self.dominant.is_empty() {
                    format!(
                        "no step carries {:.0}% of the total or more",
                        100.0 * MIN_LABEL_SHARE
                    )
                } else {
                    "steps carrying most of the total (index count, share)".to_string()
                })
                .legend(move |(x, y)| Circle::new((x + 10, y), 5, red.stroke_width(2)));
            chart
                .draw_series(self.dominant.iter().enumerate().map(|(j, &i)| {
                    let s = &self.steps[i];
                    // Alternate heights so labels of neighbouring steps do
                    // not overprint each other.
                    // Labels of the right quarter end at their point, so the
                    // plot's edge does not cut them.
                    let h = if (s.step as f64) > 0.75 * n as f64 {
                        HPos::Right
                    } else {
                        HPos::Left
                    };
                    Text::new(
                        format!("{} idx, {:.0}%", s.indices, 100.0 * s.share),
                        (s.step as f64, s.ops_log2 + 0.6 + 0.7 * (j % 2) as f64),
                        ("sans-serif", 12)
                            .into_font()
                            .color(&red)
                            .pos(Pos::new(h, VPos::Bottom)),
                    )
                }))
                .map_err(e)?;
            chart
                .configure_series_labels()
                .position(SeriesLabelPosition::LowerRight)
                .background_style(WHITE.mix(0.8))
                .border_style(BLACK)
                .draw()
                .map_err(e)?;
            root.present().map_err(e)?;
        }
        Ok(svg)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn step(ops_log2: f64) -> Step {
        Step {
            ops_log2,
            product_ops_log2: ops_log2,
            moved_elements: 1.0,
            indices: 3,
        }
    }

    #[test]
    fn the_steps_carrying_most_of_the_total_are_labelled() {
        // Shares by hand: 2^5 + 2^4 + 2^1 + 2^1 = 52; 32/52 = 0.615 and
        // 16/52 = 0.308 carry 0.92 >= 0.8 after two steps; the 2^1 steps
        // (0.038) are below the 0.1 floor anyway.
        let by_merge = [step(1.0), step(5.0), step(1.0), step(4.0)];
        let c = StepCosts::new(&by_merge, &[0, 1, 2, 3]);
        assert_eq!(c.dominant, vec![1, 3]);
        assert!((c.steps[1].share - 32.0 / 52.0).abs() < 1e-12);
        // Eight equal steps (1/8 = 0.125 each, above the floor): the
        // largest are labelled up to the limit of five.
        let even = [step(3.0); 8];
        let c = StepCosts::new(&even, &(0..8).collect::<Vec<_>>());
        assert_eq!(c.dominant.len(), MAX_LABELS);
        // Twenty equal steps carry 5% each: none dominates.
        let flat = [step(3.0); 20];
        let c = StepCosts::new(&flat, &(0..20).collect::<Vec<_>>());
        assert!(c.dominant.is_empty());
    }
}
