//! Contraction-tree search: simple orders (file order, breadth-first
//! sweep), elimination orders (min-fill, min-degree, nested dissection),
//! exact, randomised greedy and balanced-partition finders, subtree
//! refinement, rotations by annealing, simplification, proven lower bounds
//! on width and op width, and the time- or trial-bounded driver that ties
//! them together.
//!
//! Most callers want [`find_tree`] (or [`find_tree_with`] for progress and
//! Ctrl-C): give it a network and [`SearchOptions`] (objective, trial or time
//! budget, seed, threads) and get a [`SearchResult`] with the tree over the
//! network's own tensors, its metrics and the width lower bound.
//!
//! ```
//! use sliceplan::formats::einsum::network_from_einsum;
//! use sliceplan::search::{find_tree, Objective, SearchOptions};
//! let net = network_from_einsum("ab,bc,cd,da->", Some(8), &[]).unwrap();
//! let opts = SearchOptions {
//!     objective: Objective::OpsWithinWidth { max_width: 6.0 },
//!     ..SearchOptions::trials(10, 42)
//! };
//! let found = find_tree(&net, &opts).unwrap();
//! assert!(found.metrics.width <= 6.0);
//! assert!(found.lower_bound.width <= found.metrics.width);
//! ```
//!
//! The finders work on a compact [`Problem`] (tensors as index lists, log2
//! weights) and return merge lists in single-assignment form; they are
//! public so that other stages (slicing) can call them directly.

mod anneal;
mod bandit;
mod baseline;
mod bound;
mod buckets;
mod candidates;
mod dissect;
mod driver;
mod exact;
mod greedy;
mod improve;
mod objective;
mod options;
mod order;
mod partition;
mod price;
mod problem;
mod refine;
mod rounds;
mod simplify;
mod trial;

pub use anneal::{anneal_tree, AnnealParams};
pub use bandit::{Arm, Bandit};
pub use baseline::{
    baseline_tree, component_file_order, file_order_entries, file_order_tree, sweep_order,
    sweep_tree, BaselineKind, BASELINE_MAX_ENTRIES,
};
pub use bound::{op_width_lower_bound, width_lower_bound, WidthBound};
pub use buckets::{order_tree, quotient_tree};
pub use dissect::{dissection_order, dissection_tree, DissectParams};
pub use driver::{find_tree, find_tree_sliced, find_tree_with, EXACT_AUTO};
pub use exact::{exact_tree, ExactGoal, ALL_SUBSETS_MAX, CLASSES_MAX, EXACT_MAX};
pub use greedy::{greedy_tree, greedy_tree_until, GreedyParams};
pub use improve::{improve_order, order_of_tree};
pub use objective::{Key, Measures, Objective};
pub use options::{
    CandidateScore, Finders, PhaseTimes, Progress, SearchOptions, SearchResult, MAX_THREADS,
};
pub use order::{
    elimination_order, elimination_tree, min_degree_tree, min_fill_tree, Order, OrderParams,
    OrderRule, DENSE_MAX,
};
pub use partition::{partition_tree, PartitionParams};
pub use price::tree_metrics;
pub use problem::{left_deep, splice, Eval, Problem};
pub use refine::{refine_tree, RefineParams};
pub use simplify::{merge_parallel, Simplified};
