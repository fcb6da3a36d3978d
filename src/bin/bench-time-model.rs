//! The time model against the executor (run with
//! `scripts/bench-time-model.sh`): calibrates this machine, then plans and
//! runs networks of several kinds and sizes and prints the model's seconds
//! per slice beside the measured ones. Asserts nothing about time.
//!
//! Every step calls the command functions users run: `calibrate`,
//! `plan` (with a budget and the calibrated profile), `run` (a range of
//! slices, one chunk). Usage:
//! `bench-time-model [--profile FILE] [--threads T] [--only NAME] [--keep DIR]`.

use std::path::{Path, PathBuf};
use std::time::Instant;

use sliceplan::command::calibrate::{calibrate, CalibrateOptions};
use sliceplan::command::fit::FitOptions;
use sliceplan::command::generate::{build, Family, GraphValues, LatticeValues};
use sliceplan::command::plan::{plan, PlanOptions, PlanOutcome};
use sliceplan::command::run::{run, RunOptions, Which};
use sliceplan::command::{Hooks, NetworkSource, TreeChoice};
use sliceplan::formats::circuit::AmplitudeSpec;
use sliceplan::formats::graph::GraphProblem;
use sliceplan::generate::ising::IsingParams;
use sliceplan::generate::values::Filler;
use sliceplan::network::Dtype;
use sliceplan::plan::read_plan;
use sliceplan::search::SearchOptions;

/// The largest budget a case is planned for, bytes.
const BUDGET_CAP: f64 = (2u64 << 30) as f64;

/// Runs per case; the median counts.
const REPEATS: usize = 3;

/// Seconds of slices to run per case (at least one slice).
const RUN_SECONDS: f64 = 2.0;

/// One network to plan and run.
struct Case {
    name: &'static str,
    kind: &'static str,
    source: Source,
    dtype: Dtype,
    /// The budget leaves about 1 / split of the unsliced per-slice peak.
    split: u32,
}

enum Source {
    Family(Family),
    File(PathBuf),
}

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn cases() -> Vec<Case> {
    let lattice = |shape: &[usize], bond: u64, seed: u64| {
        Source::Family(Family::Lattice {
            shape: shape.to_vec(),
            periodic: false,
            values: LatticeValues::Fill {
                filler: Filler::Random { seed },
                bond,
            },
        })
    };
    let brick = |rows, cols, depth, seed| {
        Source::Family(Family::Brickwork {
            rows,
            cols,
            depth,
            seed,
            amplitude: AmplitudeSpec {
                bitstring: None,
                open: None,
            },
        })
    };
    let regular = |vertices, degree, bond, seed| {
        Source::Family(Family::RegularGraph {
            vertices,
            degree,
            seed,
            values: GraphValues::Fill {
                filler: Filler::Random { seed },
                bond,
            },
        })
    };
    let ising = |side: usize| {
        Source::Family(Family::Lattice {
            shape: vec![side, side],
            periodic: false,
            values: LatticeValues::Ising(IsingParams {
                beta: 0.4,
                coupling: 1.0,
                field: 0.1,
            }),
        })
    };
    let file = |p: &str| Source::File(root().join(p));
    let case = |name, kind, source, dtype, split| Case {
        name,
        kind,
        source,
        dtype,
        split,
    };
    vec![
        case("ising-14x14", "lattice (Ising)", ising(14), Dtype::F64, 4),
        case(
            "lattice-12x12-d2",
            "lattice",
            lattice(&[12, 12], 2, 1),
            Dtype::F64,
            4,
        ),
        case(
            "lattice-4x4x4-d2",
            "lattice 3D",
            lattice(&[4, 4, 4], 2, 2),
            Dtype::F32,
            4,
        ),
        case(
            "lattice-7x7-d4",
            "lattice",
            lattice(&[7, 7], 4, 3),
            Dtype::C128,
            4,
        ),
        case(
            "lattice-6x6-d8",
            "lattice",
            lattice(&[6, 6], 8, 4),
            Dtype::C64,
            4,
        ),
        case(
            "brickwork-4x4-d8",
            "circuit",
            brick(4, 4, 8, 5),
            Dtype::C64,
            2,
        ),
        case(
            "brickwork-5x5-d12",
            "circuit",
            brick(5, 5, 12, 6),
            Dtype::C128,
            4,
        ),
        case(
            "brickwork-5x5-d16",
            "circuit",
            brick(5, 5, 16, 7),
            Dtype::C128,
            2,
        ),
        case(
            "brickwork-6x6-d12",
            "circuit",
            brick(6, 6, 12, 8),
            Dtype::C64,
            8,
        ),
        case(
            "grid20-rotations",
            "circuit (qasm)",
            file("demo-data/circuits/grid20-rotations.qasm"),
            Dtype::C128,
            16,
        ),
        case(
            "regular-40-d3",
            "random network",
            regular(40, 3, 2, 9),
            Dtype::F64,
            4,
        ),
        case(
            "regular-24-d4-b3",
            "random network",
            regular(24, 4, 3, 10),
            Dtype::C128,
            4,
        ),
        case(
            "indep-sets-60-d3",
            "counting (graph)",
            Source::Family(Family::RegularGraph {
                vertices: 60,
                degree: 3,
                seed: 11,
                values: GraphValues::Problem(GraphProblem::IndependentSets),
            }),
            Dtype::F64,
            4,
        ),
        case(
            "seating.cnf",
            "formula",
            file("demo-data/formulas/seating.cnf"),
            Dtype::F64,
            4,
        ),
        case(
            "uf50-218 #1",
            "formula (corpus)",
            file("../shared/corpus/cnf/uf50-218/uf50-01.cnf"),
            Dtype::F64,
            64,
        ),
        case(
            "matrix-chain-3000",
            "matrix chain",
            Source::Family(Family::MatrixChain {
                dims: vec![3000, 3000, 2000, 3000, 2500],
                filler: Filler::Random { seed: 12 },
            }),
            Dtype::F64,
            1,
        ),
        case(
            "matrix-chain-4000",
            "matrix chain",
            Source::Family(Family::MatrixChain {
                dims: vec![4000, 4000, 3000, 4000, 3500],
                filler: Filler::Random { seed: 14 },
            }),
            Dtype::F64,
            1,
        ),
    ]
}

struct Row {
    name: String,
    kind: String,
    dtype: Dtype,
    tensors: usize,
    slices: u64,
    ran: u64,
    predicted: f64,
    measured: f64,
}

fn load() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .ok()
        .and_then(|t| t.split_whitespace().next().map(String::from))
        .unwrap_or_else(|| "unknown".into())
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let value = |flag: &str| {
        args.iter()
            .position(|a| a == flag)
            .and_then(|i| args.get(i + 1).cloned())
    };
    let threads: usize = value("--threads").map_or(1, |t| t.parse().expect("--threads T"));
    let only = value("--only");
    let tmp = tempfile::tempdir().expect("a temporary directory");
    let work: PathBuf = value("--keep").map_or_else(|| tmp.path().to_path_buf(), PathBuf::from);
    std::fs::create_dir_all(&work).expect("the work directory");
    let quiet = Hooks::quiet();
    println!(
        "time model check, {} (UTC), load average at start {}",
        date(),
        load()
    );
    let profile = match value("--profile") {
        Some(p) => PathBuf::from(p),
        None => {
            let t = Instant::now();
            let out = calibrate(
                &CalibrateOptions {
                    output: Some(work.join("bench-node.toml").display().to_string()),
                    name: Some("bench-node".into()),
                    max_threads: None,
                    quick: false,
                },
                &quiet,
            )
            .expect("calibration");
            println!(
                "calibrated in {:.1} s: {}",
                t.elapsed().as_secs_f64(),
                out.path.display()
            );
            out.path
        }
    };
    println!(
        "{}",
        std::fs::read_to_string(&profile)
            .unwrap_or_default()
            .lines()
            .filter(|l| l.starts_with("overhead")
                || l.starts_with("f64 =")
                || l.starts_with("bandwidth")
                || l.starts_with("threads ="))
            .collect::<Vec<_>>()
            .join("\n")
    );
    println!(
        "runs use {threads} thread(s); each runs about {RUN_SECONDS} s of slices (at least three when they fit in a minute), {REPEATS} times (once when longer than 20 s); the median counts\n"
    );
    println!("| network | kind | dtype | tensors | slices | run | predicted s/slice | measured s/slice | measured / predicted |");
    println!("|---|---|---|---:|---:|---:|---:|---:|---:|");
    let mut rows = Vec::new();
    for case in cases() {
        if only.as_deref().is_some_and(|o| o != case.name) {
            continue;
        }
        match one(&case, &profile, threads, &work) {
            Ok(row) => {
                print_row(&row);
                rows.push(row);
            }
            Err(e) => println!("{:<20} skipped: {e}", case.name),
        }
    }
    summary(&rows);
    println!("load average at end {}", load());
}

fn one(case: &Case, profile: &Path, threads: usize, work: &Path) -> Result<Row, String> {
    let quiet = Hooks::quiet();
    let source = match &case.source {
        Source::Family(f) => NetworkSource::Memory(Box::new(build(f).map_err(|e| e.to_string())?)),
        Source::File(p) if p.exists() => NetworkSource::file(p),
        Source::File(p) => return Err(format!("{} not found", p.display())),
    };
    let stem: String = case
        .name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' {
                c
            } else {
                '_'
            }
        })
        .collect();
    let plan_path = work.join(format!("{stem}.plan.toml"));
    let mut fit = FitOptions::new(source, TreeChoice::Search(SearchOptions::trials(32, 1)));
    fit.machines = vec![profile.display().to_string()];
    fit.dtype = Some(case.dtype);
    // First unsliced (a budget of 1 TiB), to size the budget from its need.
    fit.budget_bytes = Some(1 << 40);
    let first = plan(
        &PlanOptions {
            fit: fit.clone(),
            output: None,
        },
        &quiet,
    )
    .map_err(|e| e.to_string())?;
    let PlanOutcome::Sliced { fit: done, .. } = first else {
        return Err("no fit answer".into());
    };
    let m = &done.report.memory_unsliced;
    // At most 2 GiB: the machine is shared, and a formula's unsliced peak
    // can be far beyond its memory.
    let budget = (m.inputs_bytes + m.output_bytes + m.per_slice_peak_bytes / case.split as f64)
        .min(BUDGET_CAP);
    fit.budget_bytes = Some(budget.ceil() as u64);
    let out = plan(
        &PlanOptions {
            fit,
            output: Some(plan_path.clone()),
        },
        &quiet,
    )
    .map_err(|e| e.to_string())?;
    if let PlanOutcome::Sliced { written: None, .. } = out {
        return Err("nothing fits the budget".into());
    }
    let p = read_plan(&plan_path).map_err(|e| e.to_string())?;
    let slices = p.slice_count().ok_or("too many slices")?;
    let est = p.estimate.as_ref().ok_or("the plan has no estimate")?;
    let (per, _) = est.seconds_for_threads(threads as u64);
    let least = if per * 3.0 > 60.0 { 1 } else { slices.min(3) };
    let k = ((RUN_SECONDS / per.max(1e-9)).ceil() as u64).clamp(least, slices);
    // Three runs (one when a slice is long), the median measurement: other
    // work on the machine comes and goes.
    let runs = if per * k as f64 > 20.0 { 1 } else { REPEATS };
    let mut outcomes = Vec::with_capacity(runs);
    for r in 0..runs {
        let outcome = run(
            &RunOptions {
                plan: plan_path.clone(),
                which: Which::Slices(0..k),
                threads,
                out: Some(work.join(format!("{stem}.partials-{r}"))),
                // Not forced: run's check of the memory available stays on.
                force: false,
                verify: false,
                output: None,
                network: None,
                available_memory: sliceplan::host::available_memory(),
                // What the plan records, as users run it.
                reuse: true,
            },
            &quiet,
        )
        .map_err(|e| e.to_string())?;
        outcomes.push(outcome);
    }
    outcomes.sort_by(|a, b| {
        let m = |o: &sliceplan::command::run::RunOutcome| {
            o.time.measured_seconds_per_slice.unwrap_or(0.0)
        };
        m(a).total_cmp(&m(b))
    });
    let outcome = &outcomes[outcomes.len() / 2];
    let t = &outcome.time;
    // Partials of large outputs (a matrix chain's) fill a disk quickly.
    for o in &outcomes {
        let _ = std::fs::remove_dir_all(&o.dir);
    }
    Ok(Row {
        name: case.name.into(),
        kind: case.kind.into(),
        dtype: case.dtype,
        tensors: p.tensors,
        slices,
        ran: outcome.run.slices_run,
        predicted: t
            .predicted
            .as_ref()
            .ok_or("no prediction")?
            .seconds_per_slice,
        measured: t.measured_seconds_per_slice.ok_or("no measurement")?,
    })
}

fn print_row(r: &Row) {
    println!(
        "| {:<20} | {:<17} | {:<4} | {:>5} | {:>7} | {:>4} | {:>11.4e} | {:>11.4e} | {:>6.2} |",
        r.name,
        r.kind,
        r.dtype.to_string(),
        r.tensors,
        r.slices,
        r.ran,
        r.predicted,
        r.measured,
        r.measured / r.predicted
    );
}

fn summary(rows: &[Row]) {
    if rows.is_empty() {
        return;
    }
    let mut ratios: Vec<f64> = rows.iter().map(|r| r.measured / r.predicted).collect();
    ratios.sort_by(f64::total_cmp);
    let n = ratios.len();
    let median = if n % 2 == 1 {
        ratios[n / 2]
    } else {
        (ratios[n / 2 - 1] * ratios[n / 2]).sqrt()
    };
    let inside = ratios.iter().filter(|&&r| (0.5..=2.0).contains(&r)).count();
    println!(
        "\n{n} networks; measured / predicted: min {:.2}, median {median:.2}, max {:.2}",
        ratios[0],
        ratios[n - 1]
    );
    println!(
        "within 0.5x-2x: {inside} of {n} (target: all){}",
        if inside == n { "" } else { " -- MISSED" }
    );
    println!(
        "median within 0.8x-1.25x: {}",
        if (0.8..=1.25).contains(&median) {
            "yes"
        } else {
            "no -- MISSED"
        }
    );
    for r in rows
        .iter()
        .filter(|r| !(0.5..=2.0).contains(&(r.measured / r.predicted)))
    {
        println!("  outside: {} ({:.2}x)", r.name, r.measured / r.predicted);
    }
}

fn date() -> String {
    let out = std::process::Command::new("date")
        .args(["-u", "+%Y-%m-%d %H:%M"])
        .output();
    out.ok()
        .map(|o| String::from_utf8_lossy(&o.stdout).trim().to_string())
        .unwrap_or_default()
}
