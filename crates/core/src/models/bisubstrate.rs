//! Steady-state rate laws of an enzyme with two substrates, A and B,
//! fitted globally to rates measured over a grid of [A] and [B].
//!
//! All three are cases of the ternary-complex (sequential) rate law
//!
//! ```text
//! v = Vmax·[A]·[B] / (KiA·KmB + KmB·[A] + KmA·[B] + [A]·[B])
//! ```
//!
//! (handbook form for a sequential mechanism, random or compulsory order;
//! Cornish-Bowden, "Fundamentals of Enzyme Kinetics", 4th ed. 2012, ch. 8,
//! from memory). KmA and KmB are the Michaelis constants of A and B at
//! saturating levels of the other substrate; KiA is the dissociation
//! constant of A from the free enzyme. The rapid-equilibrium ordered case
//! (A binds first, and its complex is at equilibrium) is the limit
//! KmA → 0; the ping-pong (substituted-enzyme) mechanism is the limit
//! KiA → 0, where the constant term vanishes and the lines of the
//! double-reciprocal plot become parallel. The predictors are `x = [A, B]`.

use super::start::{log_grid, positive_range, scaled_rss_in};
use crate::error::Error;
use crate::model::{Dimension, Model, Observations, ParameterSpec};

/// Which two-substrate mechanism.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum TwoSubstrateMechanism {
    /// Ternary complex, random or compulsory order: Vmax, KmA, KmB, KiA.
    Sequential,
    /// Rapid-equilibrium ordered (A first): Vmax, KmB, KiA (KmA = 0).
    Ordered,
    /// Ping-pong (substituted enzyme): Vmax, KmA, KmB (KiA = 0).
    PingPong,
}

impl TwoSubstrateMechanism {
    /// The three mechanisms, the general one first.
    pub const ALL: [TwoSubstrateMechanism; 3] =
        [TwoSubstrateMechanism::Sequential, TwoSubstrateMechanism::Ordered, TwoSubstrateMechanism::PingPong];

    /// The machine name (`sequential`, `ordered`, `ping-pong`).
    pub fn name(self) -> &'static str {
        match self {
            TwoSubstrateMechanism::Sequential => "sequential",
            TwoSubstrateMechanism::Ordered => "ordered",
            TwoSubstrateMechanism::PingPong => "ping-pong",
        }
    }

    /// The mechanism of a machine name.
    pub fn from_name(name: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|m| m.name() == name.trim())
    }
}

const VMAX: ParameterSpec = ParameterSpec { name: "Vmax", dimension: Dimension::Response };
const KMA: ParameterSpec = ParameterSpec { name: "KmA", dimension: Dimension::Predictor(0) };
const KMB: ParameterSpec = ParameterSpec { name: "KmB", dimension: Dimension::Predictor(1) };
const KIA: ParameterSpec = ParameterSpec { name: "KiA", dimension: Dimension::Predictor(0) };
const SEQUENTIAL: [ParameterSpec; 4] = [VMAX, KMA, KMB, KIA];
const ORDERED: [ParameterSpec; 3] = [VMAX, KMB, KIA];
const PING_PONG: [ParameterSpec; 3] = [VMAX, KMA, KMB];

/// A two-substrate rate law; `x = [A, B]`.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct TwoSubstrates {
    /// The mechanism this model describes.
    pub mechanism: TwoSubstrateMechanism,
}

impl TwoSubstrates {
    /// The model of `mechanism`.
    pub fn new(mechanism: TwoSubstrateMechanism) -> Self {
        TwoSubstrates { mechanism }
    }

    /// The constants (Vmax, KmA, KmB, KiA) of the general law that these
    /// parameters stand for, with zero for the constant the mechanism lacks.
    pub fn general(&self, p: &[f64]) -> [f64; 4] {
        match self.mechanism {
            TwoSubstrateMechanism::Sequential => [p[0], p[1], p[2], p[3]],
            TwoSubstrateMechanism::Ordered => [p[0], 0.0, p[1], p[2]],
            TwoSubstrateMechanism::PingPong => [p[0], p[1], p[2], 0.0],
        }
    }

    /// The parameters of this mechanism from general constants (Vmax, KmA,
    /// KmB, KiA): the inverse of [`TwoSubstrates::general`], dropping the
    /// constant the mechanism lacks.
    pub fn from_general(&self, g: [f64; 4]) -> Vec<f64> {
        match self.mechanism {
            TwoSubstrateMechanism::Sequential => g.to_vec(),
            TwoSubstrateMechanism::Ordered => vec![g[0], g[2], g[3]],
            TwoSubstrateMechanism::PingPong => vec![g[0], g[1], g[2]],
        }
    }

    /// Apparent (Vmax, Km for A) at a fixed [B]: the hyperbola in [A] the
    /// law gives there, Vmax·[B]/(KmB + [B]) and (KiA·KmB + KmA·[B])/(KmB + [B]).
    pub fn apparent(&self, b: f64, p: &[f64]) -> (f64, f64) {
        let [vmax, kma, kmb, kia] = self.general(p);
        (vmax * b / (kmb + b), (kia * kmb + kma * b) / (kmb + b))
    }
}

impl Model for TwoSubstrates {
    fn name(&self) -> &str {
        self.mechanism.name()
    }

    fn equation(&self) -> &str {
        match self.mechanism {
            TwoSubstrateMechanism::Sequential => "v = Vmax·[A]·[B] / (KiA·KmB + KmB·[A] + KmA·[B] + [A]·[B])",
            TwoSubstrateMechanism::Ordered => "v = Vmax·[A]·[B] / (KiA·KmB + KmB·[A] + [A]·[B])",
            TwoSubstrateMechanism::PingPong => "v = Vmax·[A]·[B] / (KmB·[A] + KmA·[B] + [A]·[B])",
        }
    }

    fn parameters(&self) -> &[ParameterSpec] {
        match self.mechanism {
            TwoSubstrateMechanism::Sequential => &SEQUENTIAL,
            TwoSubstrateMechanism::Ordered => &ORDERED,
            TwoSubstrateMechanism::PingPong => &PING_PONG,
        }
    }

    fn predictors(&self) -> usize {
        2
    }

    fn value(&self, x: &[f64], p: &[f64]) -> f64 {
        let (a, b) = (x[0], x[1]);
        let numerator = a * b;
        if numerator == 0.0 {
            // No rate without both substrates (and no 0/0 for ping-pong at
            // [A] = [B] = 0).
            return 0.0;
        }
        let [vmax, kma, kmb, kia] = self.general(p);
        vmax * numerator / (kia * kmb + kmb * a + kma * b + numerator)
    }

    fn gradient(&self, x: &[f64], p: &[f64], gradient: &mut [f64]) {
        let (a, b) = (x[0], x[1]);
        let numerator = a * b;
        if numerator == 0.0 {
            gradient.iter_mut().for_each(|g| *g = 0.0);
            return;
        }
        let [vmax, kma, kmb, kia] = self.general(p);
        let d = kia * kmb + kmb * a + kma * b + numerator;
        // v = Vmax·N/D: ∂v/∂Vmax = N/D, and for a constant K in D,
        // ∂v/∂K = −Vmax·N·(∂D/∂K)/D², with ∂D/∂KmA = [B],
        // ∂D/∂KmB = KiA + [A], ∂D/∂KiA = KmB.
        let d_vmax = numerator / d;
        let common = -vmax * numerator / (d * d);
        let (d_kma, d_kmb, d_kia) = (common * b, common * (kia + a), common * kmb);
        match self.mechanism {
            TwoSubstrateMechanism::Sequential => gradient.copy_from_slice(&[d_vmax, d_kma, d_kmb, d_kia]),
            TwoSubstrateMechanism::Ordered => gradient.copy_from_slice(&[d_vmax, d_kmb, d_kia]),
            TwoSubstrateMechanism::PingPong => gradient.copy_from_slice(&[d_vmax, d_kma, d_kmb]),
        }
    }

    /// Starting values: each constant on a logarithmic grid from 1/10 of
    /// the smallest to 10 times the largest concentration above zero of its
    /// substrate (KiA on the [A] grid), Vmax by linear least squares at
    /// every grid point (9 points a constant; for the four-parameter law a
    /// 7 × 7 × 7 grid), then a finer grid (half the step) around the best
    /// point. Rows with [A] or [B] at zero carry no information on the
    /// shape and are not used.
    fn initial_guess(&self, data: &Observations) -> Result<Vec<f64>, Error> {
        let missing = || Error::invalid_data("a two-substrate model needs rows with both [A] and [B] above zero");
        let (a_low, a_high) = positive_range(data, 0).ok_or_else(missing)?;
        let (b_low, b_high) = positive_range(data, 1).ok_or_else(missing)?;
        let coarse = match self.mechanism {
            TwoSubstrateMechanism::Sequential => 7,
            _ => 9,
        };
        let a_grid = log_grid(a_low / 10.0, a_high * 10.0, coarse);
        let b_grid = log_grid(b_low / 10.0, b_high * 10.0, coarse);
        let mut shapes = Vec::with_capacity(data.len());
        let mut best: Option<(f64, [f64; 4])> = None;
        // Candidates are general constants [1, KmA, KmB, KiA]; the
        // mechanism's own parameters are taken from them.
        let mut consider = |g: [f64; 4], best: &mut Option<(f64, [f64; 4])>| {
            let unit = self.from_general(g);
            let shape = |x: &[f64]| self.value(x, &unit);
            if let Some((scale, rss)) = scaled_rss_in(data, &shape, &mut shapes) {
                if scale > 0.0 && best.as_ref().is_none_or(|(b, _)| rss < *b) {
                    let mut g = g;
                    g[0] = scale;
                    *best = Some((rss, g));
                }
            }
        };
        let lone = [1.0];
        let (kma_grid, kia_grid): (&[f64], &[f64]) = match self.mechanism {
            TwoSubstrateMechanism::Sequential => (&a_grid, &a_grid),
            TwoSubstrateMechanism::Ordered => (&lone, &a_grid),
            TwoSubstrateMechanism::PingPong => (&a_grid, &lone),
        };
        for &kma in kma_grid {
            for &kmb in &b_grid {
                for &kia in kia_grid {
                    consider([1.0, kma, kmb, kia], &mut best);
                }
            }
        }
        // The finer grid: half the coarse step either side of the best
        // point in every constant the mechanism has.
        if let Some((_, centre)) = best {
            let half = (a_grid[1] / a_grid[0]).sqrt();
            let steps: &[i32] = &[-1, 0, 1];
            let fixed: &[i32] = &[0];
            let (kma_steps, kia_steps) = match self.mechanism {
                TwoSubstrateMechanism::Sequential => (steps, steps),
                TwoSubstrateMechanism::Ordered => (fixed, steps),
                TwoSubstrateMechanism::PingPong => (steps, fixed),
            };
            for &i in kma_steps {
                for j in -1..=1 {
                    for &k in kia_steps {
                        let g = [1.0, centre[1] * half.powi(i), centre[2] * half.powi(j), centre[3] * half.powi(k)];
                        consider(g, &mut best);
                    }
                }
            }
        }
        let (_, g) = best.ok_or_else(|| Error::numerical("no starting values could be formed for the two-substrate model"))?;
        let mut g = g;
        match self.mechanism {
            TwoSubstrateMechanism::Ordered => g[1] = 0.0,
            TwoSubstrateMechanism::PingPong => g[3] = 0.0,
            TwoSubstrateMechanism::Sequential => {}
        }
        Ok(self.from_general(g))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::gradient_disagreement;

    fn grid(levels_a: &[f64], levels_b: &[f64]) -> Observations {
        let mut x = Vec::new();
        for &a in levels_a {
            for &b in levels_b {
                x.extend([a, b]);
            }
        }
        let n = x.len() / 2;
        Observations::new(2, x, vec![1.0; n], None).unwrap()
    }

    /// Every mechanism's analytic gradient against finite differences, at
    /// parameters over six decades, including rows with [A] or [B] = 0.
    #[test]
    fn gradients_match_finite_differences() {
        let data = grid(&[0.0, 0.05, 0.2, 1.0, 5.0, 50.0], &[0.0, 0.1, 0.5, 2.0, 20.0]);
        for mechanism in TwoSubstrateMechanism::ALL {
            let model = TwoSubstrates::new(mechanism);
            for scale in [1e-3, 1.0, 1e3] {
                let general = [12.0 * scale, 0.8 * scale, 2.5, 0.4 * scale];
                let p = model.from_general(general);
                let worst = gradient_disagreement(&model, &data, &p);
                assert!(worst < 1e-7, "{}: p = {p:?}: {worst}", mechanism.name());
            }
        }
    }

    /// The special cases are the general law with one constant at zero.
    #[test]
    fn special_cases_are_limits_of_the_general_law() {
        let sequential = TwoSubstrates::new(TwoSubstrateMechanism::Sequential);
        for mechanism in [TwoSubstrateMechanism::Ordered, TwoSubstrateMechanism::PingPong] {
            let model = TwoSubstrates::new(mechanism);
            let p = model.from_general([10.0, 0.7, 2.0, 0.3]);
            let g = model.general(&p);
            for x in [[0.3, 0.5], [2.0, 7.0], [0.05, 40.0]] {
                assert_eq!(model.value(&x, &p), sequential.value(&x, &g));
                let (v, k) = model.apparent(x[1], &p);
                assert!((model.value(&x, &p) - v * x[0] / (k + x[0])).abs() < 1e-12);
            }
        }
    }

    /// On exact data (no noise), the starting values are within a factor
    /// of two of the truth for every mechanism.
    #[test]
    fn starting_values_on_exact_data_are_near() {
        let base = grid(&[0.2, 0.5, 1.0, 2.0, 5.0], &[0.4, 1.0, 2.0, 4.0, 10.0]);
        for mechanism in TwoSubstrateMechanism::ALL {
            let model = TwoSubstrates::new(mechanism);
            let truth = model.from_general([10.0, 1.0, 2.0, 0.6]);
            let y: Vec<f64> = (0..base.len()).map(|r| model.value(base.x(r), &truth)).collect();
            let x: Vec<f64> = (0..base.len()).flat_map(|r| base.x(r).to_vec()).collect();
            let data = Observations::new(2, x, y, None).unwrap();
            let start = model.initial_guess(&data).unwrap();
            for (s, t) in start.iter().zip(&truth) {
                assert!((s / t).ln().abs() < 0.7, "{}: start {start:?} truth {truth:?}", mechanism.name());
            }
        }
    }
}
