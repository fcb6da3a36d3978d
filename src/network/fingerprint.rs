//! A stable fingerprint of a network's structure.
//!
//! The fingerprint is the SHA-256 of a canonical text listing every tensor in
//! order with its index names and dimensions, then the open indices. It does
//! not depend on how the file was written (whitespace, comments, the order of
//! the `[indices]` table) nor on tensor values. Plans and partial results
//! carry it so that a plan is never applied to another network.

use sha2::{Digest, Sha256};

use super::Network;

/// Version tag mixed into the hash; bump it if the canonical text changes.
const CANONICAL_VERSION: &str = "sliceplan-network-structure-v1";

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
    }
    hasher.update(b"O");
    for &e in &net.open {
        hasher.update(b" ");
        hasher.update(net.indices[e].name.as_bytes());
    }
    hasher.update(b"\n");
    let digest = hasher.finalize();
    digest[..8].iter().map(|b| format!("{b:02x}")).collect()
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
    fn fingerprint_sees_structure_only() {
        let a = chain(&[2, 3, 4], false);
        let mut renamed = a.clone();
        renamed.name = "other name".into();
        assert_eq!(a.fingerprint(), renamed.fingerprint());
        assert_eq!(a.fingerprint().len(), 16);
        assert_ne!(a.fingerprint(), chain(&[2, 3, 5], false).fingerprint());
        assert_ne!(a.fingerprint(), chain(&[2, 3, 4], true).fingerprint());
    }
}
