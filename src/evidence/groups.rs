//! Weight groups: which parameters share a regularisation constant α_c.
//!
//! Automatic relevance determination (MacKay 1994, "Bayesian non-linear
//! modelling for the prediction competition", ASHRAE Trans. 100(2):1053;
//! Neal 1996, *Bayesian Learning for Neural Networks*, §1.2.3) gives every
//! input its own α: the weights leaving input i towards all hidden units form
//! one group. Hidden biases, output weights and the output bias form one
//! group each (MacKay 1992, Neural Computation 4(3):448, §3).

use serde::{Deserialize, Serialize};

use crate::net::Architecture;

/// What a weight group holds.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum GroupKind {
    /// Weights leaving one input (index into the model's inputs).
    Input(usize),
    /// All input weights together (ARD switched off).
    AllInputs,
    /// The hidden units' biases.
    HiddenBias,
    /// The hidden-to-output weights.
    OutputWeights,
    /// The output bias.
    OutputBias,
}

/// The partition of a network's parameters into groups.
#[derive(Clone, Debug, PartialEq)]
pub struct Groups {
    kinds: Vec<GroupKind>,
    group_of_param: Vec<usize>,
    sizes: Vec<usize>,
}

impl Groups {
    /// Groups for `arch`; with `ard` every input has its own group.
    pub fn new(arch: &Architecture, ard: bool) -> Self {
        let d = arch.n_inputs;
        let mut kinds: Vec<GroupKind> = if ard {
            (0..d).map(GroupKind::Input).collect()
        } else {
            vec![GroupKind::AllInputs]
        };
        let first_other = kinds.len();
        if !arch.is_linear() {
            kinds.push(GroupKind::HiddenBias);
            kinds.push(GroupKind::OutputWeights);
        }
        kinds.push(GroupKind::OutputBias);
        let lay = arch.layout();
        let group_of_param: Vec<usize> = (0..arch.n_params())
            .map(|k| {
                if let Some(i) = arch.input_of_param(k) {
                    if ard {
                        i
                    } else {
                        0
                    }
                } else if k == lay.output_bias {
                    kinds.len() - 1
                } else if k < lay.output_weights {
                    first_other
                } else {
                    first_other + 1
                }
            })
            .collect();
        let mut sizes = vec![0; kinds.len()];
        for &g in &group_of_param {
            sizes[g] += 1;
        }
        Groups {
            kinds,
            group_of_param,
            sizes,
        }
    }

    /// Number of groups.
    pub fn len(&self) -> usize {
        self.kinds.len()
    }

    /// True when there are no groups (never, for a valid architecture).
    pub fn is_empty(&self) -> bool {
        self.kinds.is_empty()
    }

    /// The kind of each group.
    pub fn kinds(&self) -> &[GroupKind] {
        &self.kinds
    }

    /// Group index of each parameter.
    pub fn group_of_param(&self) -> &[usize] {
        &self.group_of_param
    }

    /// Number of parameters k_c in each group.
    pub fn sizes(&self) -> &[usize] {
        &self.sizes
    }

    /// Expand per-group values to one value per parameter.
    pub fn per_param(&self, per_group: &[f64]) -> Vec<f64> {
        self.group_of_param.iter().map(|&g| per_group[g]).collect()
    }

    /// Sum of squared weights in each group, `2·E_W,c`.
    pub fn sum_squares(&self, w: &[f64]) -> Vec<f64> {
        let mut s = vec![0.0; self.len()];
        for (k, &g) in self.group_of_param.iter().enumerate() {
            s[g] += w[k] * w[k];
        }
        s
    }

    /// Sum of the diagonal of a k × k matrix within each group.
    pub fn diag_sums(&self, diag: impl Iterator<Item = f64>) -> Vec<f64> {
        let mut s = vec![0.0; self.len()];
        for (k, v) in diag.enumerate() {
            s[self.group_of_param[k]] += v;
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_parameter_belongs_to_one_group() {
        let arch = Architecture::new(3, 4);
        let g = Groups::new(&arch, true);
        assert_eq!(g.len(), 3 + 3);
        assert_eq!(g.sizes().iter().sum::<usize>(), arch.n_params());
        assert_eq!(g.sizes(), &[4, 4, 4, 4, 4, 1]);
        assert_eq!(g.kinds()[3], GroupKind::HiddenBias);
    }

    #[test]
    fn linear_groups_are_inputs_and_bias() {
        let arch = Architecture::new(2, 0);
        let g = Groups::new(&arch, true);
        assert_eq!(
            g.kinds(),
            &[
                GroupKind::Input(0),
                GroupKind::Input(1),
                GroupKind::OutputBias
            ]
        );
        let shared = Groups::new(&arch, false);
        assert_eq!(shared.sizes(), &[2, 1]);
    }
}
