//! A stable fingerprint of a network: its structure and its values.
//!
//! The fingerprint is the SHA-256 of a canonical text listing every tensor in
//! order with its index names and dimensions and where its values come from
//! (inline values by their bits, `.npy` side files by the SHA-256 of their
//! content, fillers by name and seed), then the open indices and the dtype.
//! It does not depend on how the file was written (whitespace, comments, the
//! order of the `[indices]` table, where a side file lives). Plans, job
//! manifests and partial results carry it, so a plan is never applied to
//! another network and results of other values are never reused: importing
//! a circuit with another bitstring, or a lattice at another temperature,
//! gives another fingerprint.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::Mutex;
use std::time::SystemTime;

use sha2::{Digest, Sha256};

use super::{Fill, Network, Values};

/// Version tag mixed into the hash; bump it if the canonical text changes.
const CANONICAL_VERSION: &str = "sliceplan-network-v2";

/// The first 16 hex digits (64 bits) of the SHA-256 of the canonical text.
pub fn fingerprint(net: &Network) -> String {
    let mut hasher = Sha256::new();
    hasher.update(CANONICAL_VERSION.as_bytes());
    hasher.update(b"\n");
    for t in &net.tensors {
        hasher.update(b"T ");
        hasher.update(t.name.as_bytes());
        for &e in &t.indices {
            let index = &net.indices[e];
            hasher.update(format!(" {}={}", index.name, index.dim).as_bytes());
        }
        hasher.update(b"\n");
        hash_values(&mut hasher, t.values.as_ref());
    }
    hasher.update(b"O");
    for &e in &net.open {
        hasher.update(b" ");
        hasher.update(net.indices[e].name.as_bytes());
    }
    hasher.update(b"\n");
    if let Some(d) = net.dtype {
        hasher.update(format!("D {}\n", d.name()).as_bytes());
    }
    let digest = hasher.finalize();
    digest[..8].iter().map(|b| format!("{b:02x}")).collect()
}

/// Adds one tensor's values to the hash: numbers by their bits whether
/// they are inline or in a side file (so moving values between the two
/// keeps the fingerprint), fillers by name (and seed).
fn hash_values(hasher: &mut Sha256, values: Option<&Values>) {
    match values {
        None => hasher.update(b"V none\n"),
        Some(Values::Inline { re, im }) => {
            let mut h = Sha256::new();
            for (k, x) in re.iter().enumerate() {
                let y = im.as_ref().map_or(0.0, |im| im[k]);
                h.update(x.to_bits().to_le_bytes());
                h.update(y.to_bits().to_le_bytes());
            }
            hasher.update(format!("V values {}\n", hex(h)).as_bytes());
        }
        Some(Values::Npy(path)) => {
            hasher.update(format!("V values {}\n", npy_hash(path)).as_bytes());
        }
        Some(Values::Fill(Fill::Ones)) => hasher.update(b"V ones\n"),
        Some(Values::Fill(Fill::Copy)) => hasher.update(b"V copy\n"),
        Some(Values::Fill(Fill::Random { seed })) => {
            hasher.update(format!("V random {seed}\n").as_bytes())
        }
    }
}

fn hex(h: Sha256) -> String {
    h.finalize().iter().map(|b| format!("{b:02x}")).collect()
}

/// Hashes of side files already read in this process, by path, length and
/// modification time (a network's fingerprint is asked for several times).
/// Only files last modified more than [`SETTLED`] ago are remembered: a file
/// rewritten within the file system's timestamp granularity would otherwise
/// keep its old hash (the rule version-control tools use for racy entries).
type FileHashes = HashMap<(PathBuf, u64, Option<SystemTime>), String>;

static FILE_HASHES: Mutex<Option<FileHashes>> = Mutex::new(None);

/// How long ago a side file must have been modified for its hash to be kept.
const SETTLED: std::time::Duration = std::time::Duration::from_secs(2);

/// The hash of a side file's values (as [`hash_values`] hashes inline
/// ones), or `unreadable` when the file cannot be read as `.npy` (the
/// value check names the file when a plan is written or opened).
fn npy_hash(path: &Path) -> String {
    let Ok(meta) = std::fs::metadata(path) else {
        return "unreadable".into();
    };
    let key = (path.to_path_buf(), meta.len(), meta.modified().ok());
    if let Some(h) = FILE_HASHES
        .lock()
        .ok()
        .and_then(|m| m.as_ref().and_then(|m| m.get(&key).cloned()))
    {
        return h;
    }
    let Ok(array) = crate::npy::read_npy(path) else {
        return "unreadable".into();
    };
    let mut h = Sha256::new();
    for z in &array.values {
        h.update(z.re.to_bits().to_le_bytes());
        h.update(z.im.to_bits().to_le_bytes());
    }
    let text = hex(h);
    let settled = key
        .2
        .and_then(|t| t.elapsed().ok())
        .is_some_and(|age| age > SETTLED);
    if !settled {
        return text;
    }
    if let Ok(mut m) = FILE_HASHES.lock() {
        m.get_or_insert_with(HashMap::new).insert(key, text.clone());
    }
    text
}

#[cfg(test)]
mod tests {
    use crate::network::NetworkBuilder;

    fn chain(dims: &[u64], open_last: bool) -> crate::network::Network {
        let mut b = NetworkBuilder::new("t");
        for (k, &d) in dims.iter().enumerate() {
            b.declare(&format!("i{k}"), d, None).unwrap();
        }
        for k in 0..dims.len() - 1 {
            b.tensor(
                &format!("A{k}"),
                &[format!("i{k}"), format!("i{}", k + 1)],
                None,
                None,
            )
            .unwrap();
        }
        if open_last {
            b.open(&format!("i{}", dims.len() - 1), None).unwrap();
        }
        b.build().unwrap()
    }

    #[test]
    fn fingerprint_sees_structure_not_names_or_layout() {
        let a = chain(&[2, 3, 4], false);
        let mut renamed = a.clone();
        renamed.name = "other name".into();
        assert_eq!(a.fingerprint(), renamed.fingerprint());
        assert_eq!(a.fingerprint().len(), 16);
        assert_ne!(a.fingerprint(), chain(&[2, 3, 5], false).fingerprint());
        assert_ne!(a.fingerprint(), chain(&[2, 3, 4], true).fingerprint());
    }

    #[test]
    fn fingerprint_sees_values() {
        use crate::network::{Fill, Values};
        let base = chain(&[2, 2, 2], false);
        let with = |v: Values| {
            let mut n = base.clone();
            n.tensors[0].values = Some(v);
            n.fingerprint()
        };
        let a = with(Values::Inline {
            re: vec![1.0, 2.0, 3.0, 4.0],
            im: None,
        });
        let b = with(Values::Inline {
            re: vec![1.0, 2.0, 3.0, 4.5],
            im: None,
        });
        assert_ne!(a, b);
        assert_ne!(a, base.fingerprint());
        assert_ne!(
            with(Values::Fill(Fill::Random { seed: 1 })),
            with(Values::Fill(Fill::Random { seed: 2 }))
        );
        // A side file counts by its values, not its path or whether the
        // values sit inline.
        let dir = tempfile::tempdir().unwrap();
        let (p, q) = (dir.path().join("p.npy"), dir.path().join("q.npy"));
        let ones = |x: f64| vec![num_complex::Complex64::new(x, 0.0); 4];
        crate::npy::write_npy(&p, &[2, 2], &ones(1.0)).unwrap();
        crate::npy::write_npy(&q, &[2, 2], &ones(1.0)).unwrap();
        assert_eq!(with(Values::Npy(p.clone())), with(Values::Npy(q.clone())));
        let inline = with(Values::Inline {
            re: vec![1.0; 4],
            im: None,
        });
        assert_eq!(with(Values::Npy(p.clone())), inline);
        crate::npy::write_npy(&q, &[2, 2], &ones(2.0)).unwrap();
        assert_ne!(with(Values::Npy(p)), with(Values::Npy(q)));
    }
}
