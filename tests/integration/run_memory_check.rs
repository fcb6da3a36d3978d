//! `run` refuses a plan whose process would need more memory than this
//! machine has available, unless `--force`. The available figure is set
//! through SLICEPLAN_AVAILABLE_MEMORY so the boundary is exact.

use std::path::Path;
use std::process::Output;

fn sliceplan(dir: &Path, available: Option<u64>, args: &[&str]) -> Output {
    let mut cmd = crate::support::bin::binary();
    cmd.current_dir(dir).args(args);
    match available {
        Some(b) => cmd.env("SLICEPLAN_AVAILABLE_MEMORY", b.to_string()),
        None => cmd.env_remove("SLICEPLAN_AVAILABLE_MEMORY"),
    };
    cmd.output().unwrap()
}

#[test]
fn the_refusal_sits_exactly_at_the_predicted_need() {
    let tmp = tempfile::tempdir().unwrap();
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/ising-6x6.toml");
    let plan = tmp.path().join("ising.plan.toml");
    let o = sliceplan(
        tmp.path(),
        None,
        &[
            "plan",
            demo.to_str().unwrap(),
            "--budget",
            "6KiB",
            "--trials",
            "4",
            "--seed",
            "1",
            "-o",
            "ising.plan.toml",
        ],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    // One slice with one thread, into directory `out`, plus `extra`.
    let run = |available: u64, out: &str, extra: &[&str]| {
        let base = [
            "run",
            "ising.plan.toml",
            "--slices",
            "0..1",
            "--threads",
            "1",
            "--out",
            out,
        ];
        sliceplan(tmp.path(), Some(available), &[&base[..], extra].concat())
    };
    // The run's own figures: the process holds the inputs once, the output
    // accumulator, and the larger of (held slice-invariant intermediates +
    // one slice's peak with one thread) and the setup that computes them
    // (the rule of `cost::memory`).
    let o = run(u64::MAX / 2, "p", &["--json"]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let json: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let mem = &json["run"]["memory"];
    let need = mem["inputs"].as_u64().unwrap()
        + mem["accumulator"].as_u64().unwrap()
        + (mem["predicted_reused"].as_u64().unwrap()
            + mem["predicted_per_slice"].as_u64().unwrap())
        .max(mem["predicted_setup"].as_u64().unwrap());
    let refused = run(need - 1, "q", &[]);
    assert_eq!(refused.status.code(), Some(1));
    let err = String::from_utf8_lossy(&refused.stderr);
    assert!(
        err.contains("ising.plan.toml") && err.contains("available") && err.contains("--force"),
        "{err}"
    );
    assert!(
        !tmp.path().join("q").exists(),
        "a refused run writes nothing"
    );
    let fits = run(need, "q", &[]);
    assert!(
        fits.status.success(),
        "{}",
        String::from_utf8_lossy(&fits.stderr)
    );
    let forced = run(1, "r", &["--force"]);
    assert!(
        forced.status.success(),
        "{}",
        String::from_utf8_lossy(&forced.stderr)
    );
    assert!(plan.exists());
}
