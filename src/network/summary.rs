//! Descriptive statistics of a network for `inspect`.

use std::collections::BTreeMap;

use petgraph::unionfind::UnionFind;
use serde::Serialize;

use super::Network;

/// What `inspect` says about a network before any tree is involved.
#[derive(Debug, Clone, Serialize)]
pub struct Summary {
    /// Network name.
    pub name: String,
    /// Number of tensors.
    pub tensors: usize,
    /// Number of indices.
    pub indices: usize,
    /// Structure fingerprint.
    pub fingerprint: String,
    /// Dimension → number of indices with it.
    pub dimension_histogram: BTreeMap<u64, usize>,
    /// Names of indices shared by three or more tensors.
    pub hyperedges: Vec<String>,
    /// Names of the open indices, in output order.
    pub open: Vec<String>,
    /// log2 of the number of elements of the output.
    pub output_size_log2: f64,
    /// Name of the largest tensor.
    pub largest_tensor: String,
    /// log2 of its number of elements.
    pub largest_tensor_log2: f64,
    /// Smallest, mean and largest number of indices per tensor.
    pub tensor_degree: DegreeStats,
    /// Smallest, mean and largest number of tensors per index.
    pub index_degree: DegreeStats,
    /// Indices touching a single tensor and not open (summed on their own).
    pub dangling: Vec<String>,
    /// Number of connected components of the tensor graph.
    pub components: usize,
    /// Whether every tensor has values.
    pub has_values: bool,
}

/// Minimum, mean and maximum of a degree sequence.
#[derive(Debug, Clone, Copy, Serialize, PartialEq)]
pub struct DegreeStats {
    /// Smallest degree.
    pub min: usize,
    /// Mean degree.
    pub mean: f64,
    /// Largest degree.
    pub max: usize,
}

impl DegreeStats {
    fn of(values: impl Iterator<Item = usize> + Clone) -> DegreeStats {
        let n = values.clone().count().max(1);
        DegreeStats {
            min: values.clone().min().unwrap_or(0),
            mean: values.clone().sum::<usize>() as f64 / n as f64,
            max: values.max().unwrap_or(0),
        }
    }
}

impl Summary {
    /// Computes the summary of a network.
    pub fn of(net: &Network) -> Summary {
        let incidence = net.incidence();
        let open = net.open_mask();
        let mut dimension_histogram = BTreeMap::new();
        for index in &net.indices {
            *dimension_histogram.entry(index.dim).or_insert(0) += 1;
        }
        let name_of = |e: usize| net.indices[e].name.clone();
        let hyperedges = (0..net.num_indices())
            .filter(|&e| incidence[e].len() >= 3)
            .map(name_of)
            .collect();
        let dangling = (0..net.num_indices())
            .filter(|&e| incidence[e].len() == 1 && !open[e])
            .map(name_of)
            .collect();
        let (largest, largest_log2) = (0..net.num_tensors())
            .map(|t| (t, net.tensor_size_log2(t)))
            .fold((0, f64::NEG_INFINITY), |best, cur| {
                if cur.1 > best.1 {
                    cur
                } else {
                    best
                }
            });
        let log2_dims = net.log2_dims();
        Summary {
            name: net.name.clone(),
            tensors: net.num_tensors(),
            indices: net.num_indices(),
            fingerprint: net.fingerprint(),
            dimension_histogram,
            hyperedges,
            open: net.open.iter().map(|&e| name_of(e)).collect(),
            output_size_log2: net.open.iter().map(|&e| log2_dims[e]).sum(),
            largest_tensor: net.tensors[largest].name.clone(),
            largest_tensor_log2: largest_log2,
            tensor_degree: DegreeStats::of(net.tensors.iter().map(|t| t.indices.len())),
            index_degree: DegreeStats::of(incidence.iter().map(Vec::len)),
            dangling,
            components: components(net, &incidence),
            has_values: net.has_values(),
        }
    }
}

/// Connected components of the graph whose vertices are tensors and whose
/// edges are shared indices (petgraph's union-find).
fn components(net: &Network, incidence: &[Vec<usize>]) -> usize {
    let mut sets = UnionFind::<usize>::new(net.num_tensors());
    for tensors in incidence {
        for w in tensors.windows(2) {
            sets.union(w[0], w[1]);
        }
    }
    let mut roots = sets.into_labeling();
    roots.sort_unstable();
    roots.dedup();
    roots.len()
}
