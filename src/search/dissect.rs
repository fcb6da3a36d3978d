//! Nested dissection of the index graph by balanced vertex separators, as
//! an elimination order and a tree.
//!
//! # What it computes
//!
//! [`dissection_tree`] asks METIS for a nested-dissection order of the
//! index graph (closed indices as vertices, weighted by log2 dimension;
//! two indices adjacent when a tensor holds both): a small balanced vertex
//! separator is found, the two sides are ordered recursively, and the
//! separator comes last. The order becomes a tree by bucket elimination
//! ([`super::buckets::order_tree`]). Where min-fill decides locally, the
//! separators decide globally, which keeps the top of the tree small on
//! large, well-separated networks (lattices, circuits).
//!
//! # Arguments and result
//!
//! The problem and [`DissectParams`] (seed, separators tried per level,
//! imbalance). Returns a merge list, or `None` when METIS declines.
//!
//! # Method and complexity
//!
//! Nested dissection (George, "Nested dissection of a regular finite element
//! mesh", SIAM J. Numer. Anal. 10(2), 1973) with multilevel vertex
//! separators: METIS_NodeND (Karypis and Kumar, SIAM J. Sci. Comput. 20(1),
//! 1998), which also orders small parts by multiple minimum degree. Time
//! O(E log n) for E adjacencies of the index graph (each tensor of rank r
//! gives r(r-1)/2), memory O(E).
//!
//! # Example
//!
//! ```
//! use sliceplan::search::{dissection_tree, DissectParams, Problem};
//! // A 6 x 6 grid graph read as a network (vertices are indices of
//! // dimension 2, edges tensors): treewidth 6, so op width >= 7.
//! let l = 6u32;
//! let mut tensors = Vec::new();
//! for x in 0..l {
//!     for y in 0..l {
//!         if x + 1 < l { tensors.push(vec![x * l + y, (x + 1) * l + y]); }
//!         if y + 1 < l { tensors.push(vec![x * l + y, x * l + y + 1]); }
//!     }
//! }
//! let p = Problem::new(tensors, vec![1.0; 36], vec![false; 36]);
//! let merges = dissection_tree(&p, &DissectParams::default()).unwrap();
//! assert_eq!(merges.len(), p.len() - 1);
//! assert!(p.evaluate(&merges).op_width >= 7.0);
//! ```

use rand::Rng;

use super::buckets::order_tree;
use super::partition::METIS_LOCK;
use super::problem::Problem;

/// Parameters of one nested dissection.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DissectParams {
    /// Seed of METIS's random choices.
    pub seed: i32,
    /// Separators computed per level, the smallest kept (1..=5 sensible).
    pub separators: i32,
    /// Allowed imbalance of the two sides, e.g. 0.2 for 20%.
    pub imbalance: f64,
}

impl Default for DissectParams {
    fn default() -> Self {
        DissectParams {
            seed: 1,
            separators: 1,
            imbalance: 0.2,
        }
    }
}

impl DissectParams {
    /// Draws parameters for one trial of the driver.
    pub fn sample<R: Rng>(rng: &mut R) -> DissectParams {
        DissectParams {
            seed: rng.random_range(0..i32::MAX),
            separators: rng.random_range(1..=4),
            imbalance: rng.random_range(0.03..0.5),
        }
    }
}

/// A tree by nested dissection of the index graph (see the module docs).
pub fn dissection_tree(p: &Problem, params: &DissectParams) -> Option<Vec<[usize; 2]>> {
    let order = dissection_order(p, params)?;
    Some(order_tree(p, &order))
}

/// The nested-dissection order of the closed indices.
pub fn dissection_order(p: &Problem, params: &DissectParams) -> Option<Vec<u32>> {
    let m = p.weight.len();
    // Vertices: closed indices on at least one tensor.
    let mut local = vec![u32::MAX; m];
    let mut vertices: Vec<u32> = Vec::new();
    for (e, slot) in local.iter_mut().enumerate() {
        if !p.open[e] && !p.incidence[e].is_empty() {
            *slot = vertices.len() as u32;
            vertices.push(e as u32);
        }
    }
    let nv = vertices.len();
    if nv == 0 {
        return Some(Vec::new());
    }
    let mut pairs: Vec<(u32, u32)> = Vec::new();
    for list in &p.tensors {
        let closed: Vec<u32> = list
            .iter()
            .map(|&e| local[e as usize])
            .filter(|&l| l != u32::MAX)
            .collect();
        for &a in &closed {
            for &b in &closed {
                if a != b {
                    pairs.push((a, b));
                }
            }
        }
    }
    pairs.sort_unstable();
    pairs.dedup();
    let mut xadj: Vec<metis_sys::idx_t> = vec![0; nv + 1];
    for &(a, _) in &pairs {
        xadj[a as usize + 1] += 1;
    }
    for k in 0..nv {
        xadj[k + 1] += xadj[k];
    }
    let mut adjncy: Vec<metis_sys::idx_t> =
        pairs.iter().map(|&(_, b)| b as metis_sys::idx_t).collect();
    let mut vwgt: Vec<metis_sys::idx_t> = vertices
        .iter()
        .map(|&e| ((p.weight[e as usize] * 10.0).round() as metis_sys::idx_t).max(1))
        .collect();
    if adjncy.is_empty() {
        return Some(vertices);
    }
    let mut options = [0 as metis_sys::idx_t; metis_sys::METIS_NOPTIONS as usize];
    let mut perm = vec![0 as metis_sys::idx_t; nv];
    let mut iperm = vec![0 as metis_sys::idx_t; nv];
    let mut nvtxs = nv as metis_sys::idx_t;
    let status = {
        // METIS keeps its random state in a C global (see partition.rs).
        let _one_at_a_time = METIS_LOCK.lock().unwrap_or_else(|e| e.into_inner());
        // SAFETY: the arrays have the lengths METIS_NodeND documents (xadj
        // nv + 1, adjncy xadj[nv], vwgt/perm/iperm nv, options
        // METIS_NOPTIONS) and live across the call; METIS keeps no pointer
        // to them afterwards.
        unsafe {
            metis_sys::METIS_SetDefaultOptions(options.as_mut_ptr());
            options[metis_sys::moptions_et_METIS_OPTION_SEED as usize] = params.seed;
            options[metis_sys::moptions_et_METIS_OPTION_NSEPS as usize] =
                params.separators.clamp(1, 10);
            options[metis_sys::moptions_et_METIS_OPTION_UFACTOR as usize] =
                ((params.imbalance * 1000.0).round() as metis_sys::idx_t).clamp(1, 1000);
            options[metis_sys::moptions_et_METIS_OPTION_NUMBERING as usize] = 0;
            metis_sys::METIS_NodeND(
                &mut nvtxs,
                xadj.as_mut_ptr(),
                adjncy.as_mut_ptr(),
                vwgt.as_mut_ptr(),
                options.as_mut_ptr(),
                perm.as_mut_ptr(),
                iperm.as_mut_ptr(),
            )
        }
    };
    if status != metis_sys::rstatus_et_METIS_OK {
        return None;
    }
    // perm[k] is the vertex eliminated k-th.
    let mut seen = vec![false; nv];
    let mut order = Vec::with_capacity(nv);
    for &v in &perm {
        let v = usize::try_from(v).ok().filter(|&v| v < nv)?;
        if std::mem::replace(&mut seen[v], true) {
            return None;
        }
        order.push(vertices[v]);
    }
    Some(order)
}
