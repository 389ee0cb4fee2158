//! Joint uncertainty of the fitted parameters θ = (ln k, ln V): the covariance a dose-history
//! or Bayesian fit leaves, the delta-method intervals it gives, and a Gaussian prior on θ.

/// Joint uncertainty of θ = (ln k, ln V), and the quantile its 95 % intervals use.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spread {
    /// Covariance matrix of (ln k, ln V).
    pub cov: [[f64; 2]; 2],
    /// Two-sided 95 % quantile: t(0.975, n − 2) for the dose-history fit, the normal
    /// 1.959964 for the Bayesian estimate.
    pub quantile: f64,
}

impl Spread {
    /// Standard error of ln q for a quantity q whose log has gradient `g` in (ln k, ln V)
    /// (delta method).
    pub fn se_ln(&self, g: [f64; 2]) -> f64 {
        let c = &self.cov;
        let var = g[0] * g[0] * c[0][0] + 2.0 * g[0] * g[1] * c[0][1] + g[1] * g[1] * c[1][1];
        var.max(0.0).sqrt()
    }

    /// 95 % interval of a positive quantity `value` whose log has gradient `g`:
    /// value·e^(∓q·SE(ln value)).
    pub fn interval(&self, value: f64, g: [f64; 2]) -> [f64; 2] {
        let h = self.quantile * self.se_ln(g);
        [value * (-h).exp(), value * h.exp()]
    }

    /// Standard error of ln k.
    pub fn se_ln_k(&self) -> f64 {
        self.cov[0][0].max(0.0).sqrt()
    }

    /// Standard error of ln V.
    pub fn se_ln_v(&self) -> f64 {
        self.cov[1][1].max(0.0).sqrt()
    }
}

/// Joint uncertainty of the logs of a disposition's parameters, in the order of
/// `Disposition::params` ((ln CL, ln V1, ln Q, ln V2) for two compartments); a parameter held at
/// its typical value has zero variance.
#[derive(Debug, Clone, PartialEq)]
pub struct ParamSpread {
    /// Covariance matrix of the log parameters (square, symmetric).
    pub cov: Vec<Vec<f64>>,
    /// Two-sided quantile of the intervals (normal 1.959964 for 95 %, 1.644854 for 90 %).
    pub quantile: f64,
}

impl ParamSpread {
    /// Standard error of ln q for a quantity q whose log has gradient `g` in the log
    /// parameters (delta method).
    pub fn se_ln(&self, g: &[f64]) -> f64 {
        let mut var = 0.0;
        for (i, gi) in g.iter().enumerate() {
            for (j, gj) in g.iter().enumerate() {
                var += gi
                    * gj
                    * self
                        .cov
                        .get(i)
                        .and_then(|r| r.get(j))
                        .copied()
                        .unwrap_or(0.0);
            }
        }
        var.max(0.0).sqrt()
    }

    /// The interval of a positive quantity `value` whose log has gradient `g`:
    /// value·e^(∓q·SE(ln value)).
    pub fn interval(&self, value: f64, g: &[f64]) -> [f64; 2] {
        let h = self.quantile * self.se_ln(g);
        [value * (-h).exp(), value * h.exp()]
    }
}

/// A Gaussian prior on θ = (ln k, ln V): its mean and precision (inverse covariance).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Gaussian {
    /// Mean of (ln k, ln V).
    pub mean: [f64; 2],
    /// Precision matrix (symmetric, positive definite).
    pub precision: [[f64; 2]; 2],
}
