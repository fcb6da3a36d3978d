//! The choice of finder for each trial: a multi-armed bandit over finders
//! and parameter ranges that spends more trials where improvements came
//! from.
//!
//! # What it computes
//!
//! Each arm is a finder with a range for its random parameters (greedy
//! cold or hot, partitioning into small or large leaves, min-fill or
//! min-degree with tie-breaking only or with noise, nested dissection with
//! one or several separators per level, local search on elimination
//! orders). A trial's reward is 1 when it
//! beats the best tree known when its round began, and 2^-(gap) / 2
//! otherwise, where gap is how far its objective value (log2 units) lies
//! above the best. [`Bandit::choose`] picks the arms of a round of trials
//! by the upper confidence bound mean + sqrt(2 ln N / n) (UCB1: Auer,
//! Cesa-Bianchi and Fischer, "Finite-time analysis of the multiarmed
//! bandit problem", Machine Learning 47, 2002); arms chosen earlier in the
//! same round count as pulled with their current mean, so one round
//! spreads over the promising arms.
//!
//! The choice depends only on the rewards of earlier rounds, taken in trial
//! order, so a search with a trial budget picks the same finders whatever
//! the number of threads.
//!
//! # Complexity
//!
//! O(arms) per choice and per reward.

/// A finder with a range for its parameters.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Arm {
    /// Greedy at low temperature.
    GreedyCold,
    /// Greedy at high temperature.
    GreedyHot,
    /// Partitioning down to parts of 2..=8 tensors.
    PartitionSmall,
    /// Partitioning down to parts of 9..=16 tensors.
    PartitionLarge,
    /// Min-fill with random ties.
    MinFillTies,
    /// Min-fill with noise up to 3 fill edges.
    MinFillNoisy,
    /// Min-degree with random ties.
    MinDegreeTies,
    /// Min-degree with noise.
    MinDegreeNoisy,
    /// Nested dissection, one separator per level.
    Dissection,
    /// Nested dissection, several separators per level.
    DissectionWide,
    /// Local search on the elimination order of the best tree so far (or
    /// of a fresh min-fill order).
    OrderSearch,
}

impl Arm {
    /// A short name for reports.
    pub fn name(self) -> &'static str {
        match self {
            Arm::GreedyCold | Arm::GreedyHot => "greedy",
            Arm::PartitionSmall | Arm::PartitionLarge => "partition",
            Arm::MinFillTies | Arm::MinFillNoisy => "min-fill",
            Arm::MinDegreeTies | Arm::MinDegreeNoisy => "min-degree",
            Arm::Dissection | Arm::DissectionWide => "dissection",
            Arm::OrderSearch => "order-search",
        }
    }
}

/// Pull counts and reward sums per arm.
#[derive(Debug, Clone)]
pub struct Bandit {
    arms: Vec<Arm>,
    pulls: Vec<f64>,
    rewards: Vec<f64>,
}

impl Bandit {
    /// A bandit over these arms (at least one).
    pub fn new(arms: Vec<Arm>) -> Bandit {
        assert!(!arms.is_empty(), "a bandit needs an arm");
        let k = arms.len();
        Bandit {
            arms,
            pulls: vec![0.0; k],
            rewards: vec![0.0; k],
        }
    }

    /// The arms of the next `round` trials.
    pub fn choose(&self, round: usize) -> Vec<Arm> {
        let mut pulls = self.pulls.clone();
        let mut rewards = self.rewards.clone();
        let mut out = Vec::with_capacity(round);
        for _ in 0..round {
            let total: f64 = pulls.iter().sum::<f64>().max(1.0);
            let mut best = (f64::NEG_INFINITY, 0);
            for k in 0..self.arms.len() {
                let score = if pulls[k] == 0.0 {
                    // Unpulled arms first, in their listed order.
                    f64::INFINITY
                } else {
                    rewards[k] / pulls[k] + (2.0 * total.ln() / pulls[k]).sqrt()
                };
                if score > best.0 {
                    best = (score, k);
                }
            }
            let k = best.1;
            let mean = if pulls[k] > 0.0 {
                rewards[k] / pulls[k]
            } else {
                0.5
            };
            pulls[k] += 1.0;
            rewards[k] += mean;
            out.push(self.arms[k]);
        }
        out
    }

    /// Records a trial of `arm`: `gap` is its objective value minus the best
    /// known when its round began (log2 units; negative when it improved).
    pub fn reward(&mut self, arm: Arm, gap: f64) {
        let Some(k) = self.arms.iter().position(|&a| a == arm) else {
            return;
        };
        let r = if gap < 0.0 {
            1.0
        } else if gap.is_finite() {
            0.5 * (-gap).exp2()
        } else {
            0.0
        };
        self.pulls[k] += 1.0;
        self.rewards[k] += r;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tries_every_arm_then_favours_the_rewarding_one() {
        let mut b = Bandit::new(vec![Arm::GreedyCold, Arm::MinFillTies, Arm::Dissection]);
        assert_eq!(
            b.choose(3),
            vec![Arm::GreedyCold, Arm::MinFillTies, Arm::Dissection]
        );
        for _ in 0..30 {
            b.reward(Arm::GreedyCold, 5.0);
            b.reward(Arm::MinFillTies, -1.0);
            b.reward(Arm::Dissection, 3.0);
        }
        let next = b.choose(8);
        let fill = next.iter().filter(|&&a| a == Arm::MinFillTies).count();
        assert!(fill >= 5, "{next:?}");
    }
}
