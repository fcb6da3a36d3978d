//! The memory and cost-per-step charts of `report`, checked by parsing
//! the SVG: well-formed XML, one point per step, and the budget line at
//! the height the points' own scale gives it. The figures drawn are the
//! cost model's, checked against the model's own peak.

use std::path::{Path, PathBuf};

use sliceplan::command::fit::FitOptions;
use sliceplan::command::plan::{plan, PlanOptions};
use sliceplan::command::report::{memory_profile, report, step_costs, ReportOptions};
use sliceplan::command::{open_plan, Hooks, NetworkSource, TreeChoice};
use sliceplan::search::SearchOptions;

/// The demo plan of the README: the 6x6 Ising lattice in a 6 KiB budget.
fn demo_plan(dir: &Path) -> PathBuf {
    let net = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/ising-6x6.toml");
    let mut fit = FitOptions::new(
        NetworkSource::file(net),
        TreeChoice::Search(SearchOptions::trials(8, 0)),
    );
    fit.budget_bytes = Some(6 << 10);
    let path = dir.join("ising.plan.toml");
    plan(
        &PlanOptions {
            fit,
            output: Some(path.clone()),
        },
        &Hooks::quiet(),
    )
    .unwrap();
    path
}

fn attr(n: &roxmltree::Node<'_, '_>, name: &str) -> f64 {
    n.attribute(name)
        .and_then(|v| v.parse().ok())
        .unwrap_or(f64::NAN)
}

#[test]
fn memory_chart_has_a_point_per_step_and_the_budget_at_its_height() {
    let dir = tempfile::tempdir().unwrap();
    let path = demo_plan(dir.path());
    let (svg, csv) = (dir.path().join("m.svg"), dir.path().join("m.csv"));
    report(&ReportOptions {
        plan: path.clone(),
        svg_memory: Some(svg.clone()),
        csv_memory: Some(csv.clone()),
        ..Default::default()
    })
    .unwrap();
    let (p, net) = open_plan(&path, None).unwrap();
    let profile = memory_profile(&p, &net).unwrap();
    // One step per merge plus the final permute of the result.
    assert_eq!(profile.points.len(), p.order.len() + 1);
    // The chart's peak is the plan's predicted per-slice peak (the cost
    // model's live_peak under the executor's rule, stored in the plan).
    let predicted: f64 = p.predicted.per_slice_peak_bytes.parse().unwrap();
    assert_eq!(profile.peak_bytes(), predicted);
    let text = std::fs::read_to_string(&svg).unwrap();
    let doc = roxmltree::Document::parse(&text).expect("well-formed XML");
    // Points: the small filled circles, one per step.
    let points: Vec<(f64, f64)> = doc
        .descendants()
        .filter(|n| n.has_tag_name("circle") && n.attribute("r") == Some("2"))
        .map(|n| (attr(&n, "cx"), attr(&n, "cy")))
        .collect();
    assert_eq!(points.len(), profile.points.len());
    // Pixel height is linear in bytes: fit it on the lowest and highest
    // points, then the dashed budget line must sit where that line puts
    // the budget (within 2 px of rounding).
    let totals: Vec<f64> = profile.points.iter().map(|q| q.total_bytes()).collect();
    let (lo, hi) = (
        (0..totals.len())
            .min_by(|&a, &b| totals[a].total_cmp(&totals[b]))
            .unwrap(),
        (0..totals.len())
            .max_by(|&a, &b| totals[a].total_cmp(&totals[b]))
            .unwrap(),
    );
    let per_byte = (points[hi].1 - points[lo].1) / (totals[hi] - totals[lo]);
    let budget = profile.budget_bytes.expect("the plan has a budget");
    let expected_y = points[lo].1 + (budget - totals[lo]) * per_byte;
    // Dashes: short black two-point polylines at one height, more than
    // the single legend sample.
    let mut dash_y: Vec<f64> = doc
        .descendants()
        .filter(|n| n.has_tag_name("polyline") && n.attribute("stroke") == Some("#000000"))
        .filter_map(|n| {
            let pts: Vec<f64> = n
                .attribute("points")?
                .split([' ', ','])
                .filter(|s| !s.is_empty())
                .map(|s| s.parse().unwrap())
                .collect();
            (pts.len() == 4 && pts[1] == pts[3]).then_some(pts[1])
        })
        .collect();
    dash_y.sort_by(f64::total_cmp);
    let line_y = dash_y[dash_y.len() / 2];
    assert!(
        (line_y - expected_y).abs() <= 2.0,
        "budget line at y {line_y}, expected {expected_y}"
    );
    // The peak is ringed where its point is.
    let ring = doc
        .descendants()
        .find(|n| n.has_tag_name("circle") && n.attribute("r") == Some("7"))
        .expect("the peak ring");
    assert_eq!(
        (attr(&ring, "cx"), attr(&ring, "cy")),
        points[profile.peak_step]
    );
    // CSV: a header and a row per step, totals adding up.
    let rows: Vec<String> = std::fs::read_to_string(&csv)
        .unwrap()
        .lines()
        .map(String::from)
        .collect();
    assert_eq!(rows.len(), 1 + profile.points.len());
    let first: Vec<f64> = rows[1]
        .split(',')
        .skip(2)
        .take(4)
        .map(|x| x.parse().unwrap())
        .collect();
    assert_eq!(first[0] + first[1] + first[2], first[3]);
}

#[test]
fn steps_chart_has_a_point_per_contraction_and_labels_the_dominant_ones() {
    let dir = tempfile::tempdir().unwrap();
    let path = demo_plan(dir.path());
    let (svg, csv) = (dir.path().join("s.svg"), dir.path().join("s.csv"));
    report(&ReportOptions {
        plan: path.clone(),
        svg_steps: Some(svg.clone()),
        csv_steps: Some(csv.clone()),
        ..Default::default()
    })
    .unwrap();
    let (p, net) = open_plan(&path, None).unwrap();
    let costs = step_costs(&p, &net).unwrap();
    // One step per merge of a slice: the merges of held intermediates run
    // once per process and are not among them.
    let split = sliceplan::exec::reuse::Split::new(
        &net,
        &p.tree().unwrap(),
        &p.order,
        &p.sliced_ids(&net).unwrap(),
        &p.held,
    )
    .unwrap();
    assert_eq!(costs.steps.len(), split.slice.len());
    // The shares add up to 1, and the per-slice total is the plan's
    // predicted per-slice ops (2^per_slice_total_ops_log2).
    let total: f64 = costs.steps.iter().map(|s| s.ops_log2.exp2()).sum();
    assert!((total.log2() - p.predicted.per_slice_total_ops_log2).abs() < 1e-9);
    assert!((costs.steps.iter().map(|s| s.share).sum::<f64>() - 1.0).abs() < 1e-9);
    let text = std::fs::read_to_string(&svg).unwrap();
    let doc = roxmltree::Document::parse(&text).expect("well-formed XML");
    let dots = doc
        .descendants()
        .filter(|n| n.has_tag_name("circle") && n.attribute("r") == Some("3"))
        .count();
    // One per contraction, and one in the legend.
    assert_eq!(dots, costs.steps.len() + 1);
    let labels = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter(|n| n.text().is_some_and(|t| t.contains(" idx, ")))
        .count();
    assert_eq!(labels, costs.dominant.len());
    assert!(costs.dominant.len() <= 5);
    let rows = std::fs::read_to_string(&csv).unwrap().lines().count();
    assert_eq!(rows, 1 + costs.steps.len());
}
