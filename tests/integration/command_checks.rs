//! Checks the command layer makes before and after its work, through the
//! real binary: outputs checked before any search, value files checked
//! before a plan or a job directory is written, networks with nothing to
//! contract, generator sizes, file modes, and the order of QASM refusals.

use crate::support::bin::run_in as sliceplan;
use std::path::Path;
use std::process::Command;

fn demo(name: &str) -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("demo-data")
        .join(name)
        .display()
        .to_string()
}

#[test]
fn outputs_in_missing_directories_are_refused_before_any_search() {
    let dir = tempfile::tempdir().unwrap();
    let net = demo("ising-6x6.toml");
    for (flag, file) in [
        ("-o", "no/such/dir/x.plan.toml"),
        ("--svg", "no/such/dir/f.svg"),
        ("--csv", "no/such/dir/f.csv"),
    ] {
        // A trial count far beyond what a test could wait for: the refusal
        // must come before the search.
        let (code, stdout, stderr) = sliceplan(
            dir.path(),
            &[
                "plan",
                &net,
                "--budget",
                "6KiB",
                "--trials",
                "100000000",
                flag,
                file,
            ],
        );
        assert_eq!(code, Some(2), "{flag}: {stderr}");
        assert!(stdout.is_empty());
        assert!(
            stderr.contains(file) && stderr.contains("does not exist"),
            "{flag}: {stderr}"
        );
        assert!(
            !stderr.contains(".sliceplan-"),
            "names a temp file: {stderr}"
        );
    }
}

/// A 2-tensor network whose second tensor reads `b.npy` (shape [2, 2]).
fn npy_network(dir: &Path) -> String {
    let net = dir.join("net.toml");
    std::fs::write(
        &net,
        "format = \"sliceplan-network\"\nversion = 1\ndtype = \"f64\"\ndim = 2\n\n\
         [[tensor]]\nname = \"A\"\nindices = [\"i\", \"j\"]\nvalues = [1, 2, 3, 4]\n\n\
         [[tensor]]\nname = \"B\"\nindices = [\"j\", \"k\"]\nnpy = \"b.npy\"\n",
    )
    .unwrap();
    net.display().to_string()
}

/// A float64 `.npy` file of the given shape holding 1, 2, 3, ...
fn write_npy(path: &Path, shape: &[u64], elements: usize) {
    let values: Vec<num_complex::Complex64> = (0..elements)
        .map(|k| num_complex::Complex64::new(k as f64 + 1.0, 0.0))
        .collect();
    let bytes = sliceplan::npy::encode_npy(shape, &values).unwrap();
    std::fs::write(path, bytes).unwrap();
}

#[test]
fn broken_value_files_are_found_before_a_plan_is_written() {
    let dir = tempfile::tempdir().unwrap();
    let net = npy_network(dir.path());
    let npy = dir.path().join("b.npy");
    let plan = |d: &Path| {
        sliceplan(
            d,
            &[
                "plan",
                &net,
                "--budget",
                "1KiB",
                "--trials",
                "2",
                "-o",
                "x.plan.toml",
            ],
        )
    };
    // Missing.
    let (code, _, stderr) = plan(dir.path());
    assert_eq!(code, Some(2), "{stderr}");
    assert!(
        stderr.contains("tensor 'B'") && stderr.contains("b.npy"),
        "{stderr}"
    );
    assert!(!dir.path().join("x.plan.toml").exists());
    let (code, stdout, _) = sliceplan(dir.path(), &["inspect", &net]);
    assert_eq!(code, Some(0));
    assert!(stdout.contains("1 not usable"), "{stdout}");
    // Wrong shape: 3 x 2 where the tensor is 2 x 2.
    write_npy(&npy, &[3, 2], 6);
    let (code, _, stderr) = plan(dir.path());
    assert_eq!(code, Some(2), "{stderr}");
    assert!(
        stderr.contains("has shape [2, 2], but the file holds shape [3, 2]"),
        "{stderr}"
    );
    // Truncated: the right header, half the data.
    write_npy(&npy, &[2, 2], 4);
    let whole = std::fs::read(&npy).unwrap();
    std::fs::write(&npy, &whole[..whole.len() - 16]).unwrap();
    let (code, _, stderr) = plan(dir.path());
    assert_eq!(code, Some(2), "{stderr}");
    assert!(stderr.contains("truncated"), "{stderr}");
    assert!(!dir.path().join("x.plan.toml").exists());
    // Whole again: the plan is written, and inspect says the file is whole.
    std::fs::write(&npy, &whole).unwrap();
    let (code, _, stderr) = plan(dir.path());
    assert_eq!(code, Some(0), "{stderr}");
    let (_, stdout, _) = sliceplan(dir.path(), &["inspect", &net]);
    // 4 float64 elements = 32 bytes of data.
    assert!(
        stdout.contains("1 .npy file(s), 32 B of data, all whole"),
        "{stdout}"
    );
    // Damaged after planning: jobs refuses to write the job directory.
    std::fs::write(&npy, &whole[..whole.len() - 8]).unwrap();
    let (code, _, stderr) = sliceplan(
        dir.path(),
        &[
            "jobs",
            "x.plan.toml",
            "--out",
            "job",
            "--time-per-task",
            "00:10:00",
        ],
    );
    assert_eq!(code, Some(2), "{stderr}");
    assert!(stderr.contains("b.npy"), "{stderr}");
    assert!(!dir.path().join("job/submit.sbatch").exists());
}

#[test]
fn a_single_tensor_has_zero_ops_and_no_overhead() {
    let dir = tempfile::tempdir().unwrap();
    let (code, stdout, stderr) = sliceplan(
        dir.path(),
        &["fit", "--einsum", "ab->", "--dim", "4", "--budget", "1KiB"],
    );
    assert_eq!(code, Some(0), "{stderr}");
    assert!(
        !stdout.contains("NaN") && !stdout.contains("2^-"),
        "{stdout}"
    );
    // One tensor: nothing to contract, so zero ops sliced or not, and the
    // overhead of slicing nothing is 1.
    assert!(stdout.contains("total ops 0"), "{stdout}");
    assert!(stdout.contains("1.000x"), "{stdout}");
}

#[test]
fn generators_refuse_sizes_past_the_network_cap_and_draw_any_feasible_degree() {
    let dir = tempfile::tempdir().unwrap();
    for shape in ["4294967296x4294967296", "100000x100000"] {
        let (code, _, stderr) = sliceplan(
            dir.path(),
            &["generate", "lattice", "--shape", shape, "-o", "x.toml"],
        );
        assert_eq!(code, Some(2), "{shape}: {stderr}");
        assert!(stderr.contains("at most 8388608 tensors"), "{stderr}");
    }
    let (code, stdout, stderr) = sliceplan(
        dir.path(),
        &[
            "generate",
            "regular-graph",
            "--vertices",
            "200",
            "--degree",
            "8",
            "--seed",
            "3",
            "-o",
            "g.toml",
            "--json",
        ],
    );
    assert_eq!(code, Some(0), "{stderr}");
    let v: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    // n d / 2 = 200 x 8 / 2 = 800 edges, one index each.
    assert_eq!(v["indices"], 800);
    let edges = sliceplan::generate::random_regular_graph(200, 8, 3).unwrap();
    let mut degree = vec![0; 200];
    for &(a, b) in &edges {
        assert_ne!(a, b, "self-loop");
        degree[a] += 1;
        degree[b] += 1;
    }
    assert!(degree.iter().all(|&d| d == 8));
    let mut unique = edges.clone();
    unique.dedup();
    assert_eq!(unique.len(), edges.len(), "repeated edge");
}

#[cfg(unix)]
#[test]
fn written_files_are_readable_as_the_umask_says() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let out = Command::new("sh")
        .arg("-c")
        .arg(format!(
            "umask 022 && exec '{}' plan '{}' --budget 6KiB --trials 4 -o x.plan.toml",
            env!("CARGO_BIN_EXE_sliceplan"),
            demo("ising-6x6.toml")
        ))
        .current_dir(dir.path())
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let mode = std::fs::metadata(dir.path().join("x.plan.toml"))
        .unwrap()
        .permissions()
        .mode();
    // 0666 less the umask 022.
    assert_eq!(mode & 0o777, 0o644);
}

#[test]
fn an_if_is_refused_before_the_wide_number_it_compares() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(
        dir.path().join("c.qasm"),
        "OPENQASM 2.0;\ninclude \"qelib1.inc\";\nqreg q[2];\ncreg c[80];\nif(c==123456789012345678901234567890) x q[0];\n",
    )
    .unwrap();
    let (code, _, stderr) = sliceplan(dir.path(), &["inspect", "c.qasm"]);
    assert_eq!(code, Some(2));
    assert!(
        stderr.contains("c.qasm:5: not supported: classically controlled 'if'"),
        "{stderr}"
    );
}

#[test]
fn machines_are_found_by_name_from_any_directory() {
    let dir = tempfile::tempdir().unwrap();
    let (code, stdout, stderr) = sliceplan(
        dir.path(),
        &[
            "fit",
            &demo("ising-6x6.toml"),
            "--machine",
            "cpu-64g",
            "--nodes",
            "4",
            "--trials",
            "4",
            "--json",
        ],
    );
    assert_eq!(code, Some(0), "{stderr}");
    let v: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    // --nodes overrides the profile's 32 nodes; a handful of slices uses at
    // most that many.
    assert!(v["estimate"]["nodes_used"].as_u64().unwrap() <= 4);
    let (code, _, stderr) = sliceplan(
        dir.path(),
        &["fit", &demo("ising-6x6.toml"), "--machine", "cpu-65g"],
    );
    assert_eq!(code, Some(2));
    assert!(
        stderr.contains("--machine: no machine profile named 'cpu-65g'")
            && stderr.contains("cpu-64g"),
        "{stderr}"
    );
    // The scheduler's spelling of sizes: 64G = 64 GiB.
    let (code, stdout, stderr) = sliceplan(
        dir.path(),
        &[
            "fit",
            &demo("ising-6x6.toml"),
            "--budget",
            "64G",
            "--trials",
            "2",
            "--json",
        ],
    );
    assert_eq!(code, Some(0), "{stderr}");
    let v: serde_json::Value = serde_json::from_str(&stdout).unwrap();
    assert_eq!(v["budget_bytes"], 64u64 << 30);
}
