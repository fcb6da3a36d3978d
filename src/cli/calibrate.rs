//! `sliceplan calibrate`: measure this node and write its machine profile.

use clap::Args;

use super::progress::Bars;
use super::Outcome;
use sliceplan::command::calibrate::{calibrate, CalibrateOptions, CalibrateOutcome};
use sliceplan::command::{Event, Hooks};
use sliceplan::cost::bytes::bytes_human;
use sliceplan::error::Result;

pub(super) const EXAMPLES: &str = "Examples:
  sliceplan calibrate                      # writes ~/.config/sliceplan/machines/<host>.toml
  sliceplan calibrate -o node-a            # writes ~/.config/sliceplan/machines/node-a.toml
  sliceplan calibrate -o node-b.toml --max-threads 16   # a file in this directory
  sliceplan fit ising.toml --machine node-a

Takes about 8 s per thread count measured (1, 2, 4, ... and all cores):
about a minute on a 64-core node. Run it on an idle node (inside a job on
a cluster) so that other work does not slow the figures; the load average
at the start is written into the profile.";

/// Arguments of `calibrate`.
#[derive(Debug, Args)]
pub struct CalibrateArgs {
    /// Where to write the profile: a file path (with a `/` or ending in
    /// .toml), or a bare name for NAME.toml in the user profile directory
    /// ($SLICEPLAN_MACHINES is searched too, but written to only by path).
    /// Default: this host's name in the user profile directory.
    #[arg(short = 'o', long = "output", value_name = "NAME|FILE")]
    output: Option<String>,

    /// The profile's name (default: the file's stem).
    #[arg(long, value_name = "NAME")]
    name: Option<String>,

    /// Measure at most this many threads (default: every core this process may use).
    #[arg(long, value_name = "T")]
    max_threads: Option<u64>,

    /// A rough measurement in well under a second (for trying the command; not for planning).
    #[arg(long)]
    quick: bool,

    /// Print one JSON object on stdout instead of text.
    #[arg(long)]
    json: bool,
}

pub(super) fn run(args: CalibrateArgs) -> Result<Outcome> {
    let opts = CalibrateOptions {
        output: args.output,
        name: args.name,
        max_threads: args.max_threads,
        quick: args.quick,
    };
    opts.destination()?;
    let bars = Bars::new(None, 0);
    let on = |e: Event<'_>| bars.on(e);
    let hooks = Hooks {
        progress: &on,
        stop: bars.stop(),
    };
    let outcome = calibrate(&opts, &hooks)?;
    drop(bars);
    Ok(Outcome::render(args.json, &outcome, text(&outcome), 0))
}

fn text(o: &CalibrateOutcome) -> String {
    let m = &o.machine;
    let mut s = format!(
        "{} {} ({})\n",
        if o.replaced { "replaced" } else { "wrote" },
        o.path.display(),
        m.name
    );
    s.push_str(&format!(
        "node: {} cores ({}), memory {} ({})\n",
        m.cores,
        o.node.cores_source,
        bytes_human(m.memory_bytes as f64),
        o.node.memory_source
    ));
    if let Some(l) = o.node.load {
        s.push_str(&format!(
            "load average at the start: {l:.2}{}\n",
            if l > 0.5 * m.cores as f64 {
                " (a busy node: figures may be low)"
            } else {
                ""
            }
        ));
    }
    s.push_str(&format!(
        "overhead per contraction: {:.2} us\n",
        m.overhead_seconds * 1e6
    ));
    s.push_str("threads  f32 rate   f64 rate   c64 rate   c128 rate  bandwidth   f64 share at 2^6 / 2^12 / 2^18 multiply-adds\n");
    for t in &m.threads {
        let share = |x: f64| {
            t.efficiency.as_ref().map_or(1.0, |e| {
                e.points(sliceplan::network::Dtype::F64)
                    .iter()
                    .find(|p| p.0 == x)
                    .map_or(1.0, |p| p.1)
            })
        };
        s.push_str(&format!(
            "{:>7}  {:.3e}  {:.3e}  {:.3e}  {:.3e}  {:>8.2} GB/s  {:.3} / {:.3} / {:.3}\n",
            t.threads,
            t.rate.f32,
            t.rate.f64,
            t.rate.c64,
            t.rate.c128,
            t.bandwidth / 1e9,
            share(6.0),
            share(12.0),
            share(18.0)
        ));
    }
    s.push_str(&format!(
        "rates are multiply-adds per second of large products; use it with --machine {}\n",
        if o.path
            .parent()
            .is_some_and(|p| sliceplan::command::machines::profile_dirs()
                .iter()
                .any(|d| d == p))
        {
            m.name.clone()
        } else {
            o.path.display().to_string()
        }
    ));
    s
}
