//! Named fit parameters with bounds and priors, fixed or free, and the
//! transforms to the unconstrained space used by the optimisers and the
//! sampler.
//!
//! A bounded parameter x ∈ (lo, hi) is mapped to u ∈ ℝ by the logistic
//! transform x = lo + (hi − lo) / (1 + e^{−u}); a parameter bounded below
//! only by x = lo + e^{u}; an unbounded one is left as it is. The log-prior
//! in the unconstrained space adds ln |dx/du| so that a sampler working in
//! u targets the same posterior in x (e.g. Gelman et al. 2013, *Bayesian
//! Data Analysis*, 3rd ed., §1.8 change of variables).

use serde::{Deserialize, Serialize};

/// A prior density on one parameter (in the parameter's own units).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub enum Prior {
    /// Uniform on [lower, upper].
    Uniform {
        /// Lower bound.
        lower: f64,
        /// Upper bound.
        upper: f64,
    },
    /// Uniform in ln x on [lower, upper], 0 < lower < upper.
    LogUniform {
        /// Lower bound (> 0).
        lower: f64,
        /// Upper bound.
        upper: f64,
    },
    /// Uniform over one period of an angle-like parameter, [lower, upper):
    /// the value wraps around (e.g. a mean longitude in degrees on
    /// [0, 360)), so optimisers and samplers move freely across the seam.
    Periodic {
        /// Start of the period.
        lower: f64,
        /// End of the period.
        upper: f64,
    },
    /// Gaussian with the given mean and standard deviation, optionally
    /// truncated to [lower, upper].
    Gaussian {
        /// Mean.
        mean: f64,
        /// Standard deviation (> 0).
        sigma: f64,
        /// Optional lower truncation.
        lower: Option<f64>,
        /// Optional upper truncation.
        upper: Option<f64>,
    },
}

/// Why a parameter or prior was refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ParamError {
    /// A bound or prior value is not finite.
    #[error("parameter `{name}`: {what} is not a finite number")]
    NotFinite {
        /// Parameter name.
        name: String,
        /// Which value.
        what: &'static str,
    },
    /// The lower bound is not below the upper bound.
    #[error("parameter `{name}`: lower bound {lower} is not below upper bound {upper}")]
    EmptyRange {
        /// Parameter name.
        name: String,
        /// Lower bound.
        lower: f64,
        /// Upper bound.
        upper: f64,
    },
    /// A log-uniform prior needs a positive lower bound; a Gaussian a positive sigma.
    #[error("parameter `{name}`: {why}")]
    BadPrior {
        /// Parameter name.
        name: String,
        /// Explanation.
        why: String,
    },
    /// The starting value lies outside the prior's support.
    #[error(
        "parameter `{name}`: starting value {value} lies outside its prior's range [{lower}, {upper}]"
    )]
    OutsideRange {
        /// Parameter name.
        name: String,
        /// Value.
        value: f64,
        /// Lower bound of the support.
        lower: f64,
        /// Upper bound of the support.
        upper: f64,
    },
    /// The vector handed in has the wrong length.
    #[error("expected {expected} values, got {got}")]
    WrongLength {
        /// Expected length.
        expected: usize,
        /// Actual length.
        got: usize,
    },
    /// Two parameters share a name.
    #[error("parameter `{0}` is defined twice")]
    Duplicate(String),
}

impl Prior {
    /// The support [lower, upper] of the prior (infinite where unbounded).
    pub fn support(&self) -> (f64, f64) {
        match *self {
            Prior::Uniform { lower, upper }
            | Prior::LogUniform { lower, upper }
            | Prior::Periodic { lower, upper } => (lower, upper),
            Prior::Gaussian { lower, upper, .. } => (
                lower.unwrap_or(f64::NEG_INFINITY),
                upper.unwrap_or(f64::INFINITY),
            ),
        }
    }

    /// Check the prior's own values; `name` is used in the error.
    pub fn validate(&self, name: &str) -> Result<(), ParamError> {
        let nf = |what| ParamError::NotFinite {
            name: name.to_string(),
            what,
        };
        match *self {
            Prior::Uniform { lower, upper }
            | Prior::LogUniform { lower, upper }
            | Prior::Periodic { lower, upper } => {
                if !lower.is_finite() {
                    return Err(nf("lower bound"));
                }
                if !upper.is_finite() {
                    return Err(nf("upper bound"));
                }
                if lower >= upper {
                    return Err(ParamError::EmptyRange {
                        name: name.to_string(),
                        lower,
                        upper,
                    });
                }
                if matches!(self, Prior::LogUniform { .. }) && lower <= 0.0 {
                    return Err(ParamError::BadPrior {
                        name: name.to_string(),
                        why: format!(
                            "a log-uniform prior needs a positive lower bound, got {lower}"
                        ),
                    });
                }
            }
            Prior::Gaussian {
                mean,
                sigma,
                lower,
                upper,
            } => {
                if !mean.is_finite() {
                    return Err(nf("mean"));
                }
                if !(sigma.is_finite() && sigma > 0.0) {
                    return Err(ParamError::BadPrior {
                        name: name.to_string(),
                        why: format!("a Gaussian prior needs a positive finite sigma, got {sigma}"),
                    });
                }
                let (lo, hi) = self.support();
                if lower.is_some_and(|v| !v.is_finite()) {
                    return Err(nf("lower bound"));
                }
                if upper.is_some_and(|v| !v.is_finite()) {
                    return Err(nf("upper bound"));
                }
                if lo >= hi {
                    return Err(ParamError::EmptyRange {
                        name: name.to_string(),
                        lower: lo,
                        upper: hi,
                    });
                }
            }
        }
        Ok(())
    }

    /// Log prior density at x, up to a constant (−∞ outside the support).
    pub fn ln_density(&self, x: f64) -> f64 {
        let (lo, hi) = self.support();
        if !(x >= lo && x <= hi) {
            return f64::NEG_INFINITY;
        }
        match *self {
            Prior::Uniform { .. } | Prior::Periodic { .. } => 0.0,
            Prior::LogUniform { .. } => -x.ln(),
            Prior::Gaussian { mean, sigma, .. } => {
                let z = (x - mean) / sigma;
                -0.5 * z * z
            }
        }
    }
}

/// How a parameter maps to the unconstrained space.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Transform {
    Identity,
    Wrap { lower: f64, upper: f64 },
    Logistic { lower: f64, upper: f64 },
    LowerExp { lower: f64 },
    UpperExp { upper: f64 },
}

impl Transform {
    fn for_prior(prior: &Prior) -> Self {
        if let Prior::Periodic { lower, upper } = *prior {
            return Transform::Wrap { lower, upper };
        }
        let (lo, hi) = prior.support();
        match (lo.is_finite(), hi.is_finite()) {
            (true, true) => Transform::Logistic {
                lower: lo,
                upper: hi,
            },
            (true, false) => Transform::LowerExp { lower: lo },
            (false, true) => Transform::UpperExp { upper: hi },
            (false, false) => Transform::Identity,
        }
    }

    /// x from u, and ln |dx/du|.
    fn forward(&self, u: f64) -> (f64, f64) {
        match *self {
            Transform::Identity => (u, 0.0),
            Transform::Wrap { lower, upper } => (wrap_into(u, lower, upper), 0.0),
            Transform::Logistic { lower, upper } => {
                // Numerically stable logistic and its log-derivative.
                let s = if u >= 0.0 {
                    1.0 / (1.0 + (-u).exp())
                } else {
                    u.exp() / (1.0 + u.exp())
                };
                let x = lower + (upper - lower) * s;
                let ln_jac = (upper - lower).ln() - softplus(-u) - softplus(u);
                (x.clamp(lower, upper), ln_jac)
            }
            Transform::LowerExp { lower } => (lower + u.exp(), u),
            Transform::UpperExp { upper } => (upper - u.exp(), u),
        }
    }

    /// u from x (x strictly inside the support; values on a bound are
    /// nudged inside by a relative 1e-12 of the range).
    fn inverse(&self, x: f64) -> f64 {
        match *self {
            Transform::Identity => x,
            Transform::Wrap { lower, upper } => wrap_into(x, lower, upper),
            Transform::Logistic { lower, upper } => {
                let w = upper - lower;
                let s = ((x - lower) / w).clamp(1e-12, 1.0 - 1e-12);
                (s / (1.0 - s)).ln()
            }
            Transform::LowerExp { lower } => (x - lower).max(f64::MIN_POSITIVE).ln(),
            Transform::UpperExp { upper } => (upper - x).max(f64::MIN_POSITIVE).ln(),
        }
    }
}

/// x wrapped into [lower, upper).
#[inline]
fn wrap_into(x: f64, lower: f64, upper: f64) -> f64 {
    let w = upper - lower;
    let y = lower + (x - lower).rem_euclid(w);
    if y >= upper { lower } else { y }
}

/// ln(1 + e^x) without overflow.
#[inline]
fn softplus(x: f64) -> f64 {
    if x > 30.0 { x } else { x.exp().ln_1p() }
}

/// One named parameter: its value (the starting value, or the fixed value),
/// its prior, and whether it is fixed.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Parameter {
    /// Name, unique within a set (e.g. `b.period`, `KORVA.offset`).
    pub name: String,
    /// Starting or fixed value.
    pub value: f64,
    /// Prior density; its support gives the bounds.
    pub prior: Prior,
    /// Held at `value` rather than fitted.
    #[serde(default)]
    pub fixed: bool,
}

/// An ordered set of named parameters. The full vector (all parameters,
/// in order) is what models read; the free vector (free parameters only)
/// is what optimisers and samplers move, in its unconstrained form.
#[derive(Debug, Clone, PartialEq)]
pub struct ParameterSet {
    params: Vec<Parameter>,
    free: Vec<usize>,
    transforms: Vec<Transform>,
}

impl ParameterSet {
    /// Build a set, validating every prior and starting value and refusing
    /// duplicate names.
    ///
    /// ```
    /// use apsidal::fit::params::{Parameter, ParameterSet, Prior};
    /// let set = ParameterSet::new(vec![
    ///     Parameter { name: "b.period".into(), value: 100.0,
    ///                 prior: Prior::LogUniform { lower: 1.0, upper: 1e4 }, fixed: false },
    ///     Parameter { name: "jitter".into(), value: 2.0,
    ///                 prior: Prior::Uniform { lower: 0.0, upper: 50.0 }, fixed: true },
    /// ]).unwrap();
    /// let u = set.start_unconstrained();
    /// let full = set.full_from_unconstrained(&u).unwrap();
    /// assert!((full[0] - 100.0).abs() < 1e-9 && full[1] == 2.0);
    /// ```
    pub fn new(params: Vec<Parameter>) -> Result<Self, ParamError> {
        let mut seen = std::collections::HashSet::new();
        for p in &params {
            if !seen.insert(p.name.as_str()) {
                return Err(ParamError::Duplicate(p.name.clone()));
            }
            p.prior.validate(&p.name)?;
            if !p.value.is_finite() {
                return Err(ParamError::NotFinite {
                    name: p.name.clone(),
                    what: "starting value",
                });
            }
            let (lo, hi) = p.prior.support();
            let periodic = matches!(p.prior, Prior::Periodic { .. });
            let inside = p.value >= lo && p.value <= hi;
            if !periodic && !inside {
                return Err(ParamError::OutsideRange {
                    name: p.name.clone(),
                    value: p.value,
                    lower: lo,
                    upper: hi,
                });
            }
        }
        let free: Vec<usize> = (0..params.len()).filter(|&i| !params[i].fixed).collect();
        let transforms = params
            .iter()
            .map(|p| Transform::for_prior(&p.prior))
            .collect();
        Ok(ParameterSet {
            params,
            free,
            transforms,
        })
    }

    /// All parameters in order.
    pub fn parameters(&self) -> &[Parameter] {
        &self.params
    }

    /// Number of parameters (free and fixed).
    pub fn len(&self) -> usize {
        self.params.len()
    }

    /// True when the set is empty.
    pub fn is_empty(&self) -> bool {
        self.params.is_empty()
    }

    /// Number of free parameters.
    pub fn n_free(&self) -> usize {
        self.free.len()
    }

    /// Indices (into the full vector) of the free parameters.
    pub fn free_indices(&self) -> &[usize] {
        &self.free
    }

    /// Names of the free parameters, in free-vector order.
    pub fn free_names(&self) -> Vec<&str> {
        self.free
            .iter()
            .map(|&i| self.params[i].name.as_str())
            .collect()
    }

    /// Index of a parameter by name.
    pub fn index_of(&self, name: &str) -> Option<usize> {
        self.params.iter().position(|p| p.name == name)
    }

    /// The full vector of starting values.
    pub fn start_full(&self) -> Vec<f64> {
        self.params.iter().map(|p| p.value).collect()
    }

    /// The free starting values in unconstrained form.
    pub fn start_unconstrained(&self) -> Vec<f64> {
        self.free
            .iter()
            .map(|&i| self.transforms[i].inverse(self.params[i].value))
            .collect()
    }

    /// Unconstrained free vector → full vector (fixed values filled in).
    pub fn full_from_unconstrained(&self, u: &[f64]) -> Result<Vec<f64>, ParamError> {
        let mut full = self.start_full();
        self.fill_full(u, &mut full)?;
        Ok(full)
    }

    /// Unconstrained free vector → full vector written into `full` (which
    /// must hold [`ParameterSet::len`] values, fixed ones already set);
    /// returns Σ ln |dx/du| of the free parameters.
    pub fn fill_full(&self, u: &[f64], full: &mut [f64]) -> Result<f64, ParamError> {
        if u.len() != self.free.len() {
            return Err(ParamError::WrongLength {
                expected: self.free.len(),
                got: u.len(),
            });
        }
        if full.len() != self.params.len() {
            return Err(ParamError::WrongLength {
                expected: self.params.len(),
                got: full.len(),
            });
        }
        let mut ln_jac = 0.0;
        for (k, &i) in self.free.iter().enumerate() {
            let (x, lj) = self.transforms[i].forward(u[k]);
            full[i] = x;
            ln_jac += lj;
        }
        Ok(ln_jac)
    }

    /// Full vector → unconstrained free vector.
    pub fn unconstrained_from_full(&self, full: &[f64]) -> Result<Vec<f64>, ParamError> {
        if full.len() != self.params.len() {
            return Err(ParamError::WrongLength {
                expected: self.params.len(),
                got: full.len(),
            });
        }
        Ok(self
            .free
            .iter()
            .map(|&i| self.transforms[i].inverse(full[i]))
            .collect())
    }

    /// Sum of the free parameters' log prior densities at the full vector
    /// (−∞ when any lies outside its support).
    pub fn ln_prior(&self, full: &[f64]) -> f64 {
        self.free
            .iter()
            .map(|&i| self.params[i].prior.ln_density(full[i]))
            .sum()
    }

    /// Parameter `index` (into the full vector) from its unconstrained
    /// value `u`, with ln |dx/du|.
    pub fn forward_one(&self, index: usize, u: f64) -> (f64, f64) {
        self.transforms[index].forward(u)
    }

    /// The unconstrained value of parameter `index` at `x`.
    pub fn inverse_one(&self, index: usize, x: f64) -> f64 {
        self.transforms[index].inverse(x)
    }

    /// A copy of the set with new starting values (e.g. an optimum), the
    /// values clamped into their supports.
    pub fn with_values(&self, full: &[f64]) -> Result<Self, ParamError> {
        if full.len() != self.params.len() {
            return Err(ParamError::WrongLength {
                expected: self.params.len(),
                got: full.len(),
            });
        }
        let mut out = self.clone();
        for (p, &v) in out.params.iter_mut().zip(full) {
            let (lo, hi) = p.prior.support();
            p.value = match p.prior {
                Prior::Periodic { .. } => wrap_into(v, lo, hi),
                _ => v.clamp(lo, hi),
            };
        }
        Ok(out)
    }
}

/// Eccentricity and the star's argument of periastron ω⋆ (rad, in
/// [0, 2π)) from the √e cos ω⋆, √e sin ω⋆ basis; `None` when e ≥ 1.
///
/// A uniform density in this basis inside the unit disc is a uniform
/// prior on e and ω⋆ (Eastman, Gaudi & Agol 2013, PASP 125, 83, §2).
#[inline]
pub fn ecc_omega_from_sqrt_basis(sc: f64, ss: f64) -> Option<(f64, f64)> {
    let e = sc * sc + ss * ss;
    if !(e < 1.0) {
        return None;
    }
    let w = if e == 0.0 {
        0.0
    } else {
        ss.atan2(sc).rem_euclid(std::f64::consts::TAU)
    };
    Some((e, w))
}

/// The √e cos ω⋆, √e sin ω⋆ basis from e and ω⋆ (rad).
#[inline]
pub fn sqrt_basis_from_ecc_omega(e: f64, omega_star: f64) -> (f64, f64) {
    let r = e.max(0.0).sqrt();
    (r * omega_star.cos(), r * omega_star.sin())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn p(name: &str, value: f64, prior: Prior) -> Parameter {
        Parameter {
            name: name.into(),
            value,
            prior,
            fixed: false,
        }
    }

    #[test]
    fn transforms_round_trip_and_jacobian() {
        let set = ParameterSet::new(vec![
            p(
                "a",
                3.0,
                Prior::Uniform {
                    lower: -1.0,
                    upper: 10.0,
                },
            ),
            p(
                "b",
                0.5,
                Prior::LogUniform {
                    lower: 0.01,
                    upper: 100.0,
                },
            ),
            p(
                "c",
                2.0,
                Prior::Gaussian {
                    mean: 0.0,
                    sigma: 1.0,
                    lower: Some(0.0),
                    upper: None,
                },
            ),
            p(
                "d",
                -7.0,
                Prior::Gaussian {
                    mean: 0.0,
                    sigma: 10.0,
                    lower: None,
                    upper: None,
                },
            ),
        ])
        .unwrap();
        let u = set.start_unconstrained();
        let full = set.full_from_unconstrained(&u).unwrap();
        for (x, y) in full.iter().zip(set.start_full()) {
            assert!((x - y).abs() < 1e-12 * y.abs().max(1.0));
        }
        // ln|dx/du| against a central finite difference of the transform.
        let mut buf = full.clone();
        let lj = set.fill_full(&u, &mut buf).unwrap();
        let mut fd = 0.0;
        for k in 0..u.len() {
            let h = 1e-6;
            let mut up = u.clone();
            let mut um = u.clone();
            up[k] += h;
            um[k] -= h;
            let xp = set.full_from_unconstrained(&up).unwrap()[k];
            let xm = set.full_from_unconstrained(&um).unwrap()[k];
            fd += ((xp - xm) / (2.0 * h)).ln();
        }
        assert!((lj - fd).abs() < 1e-6, "{lj} vs {fd}");
    }

    #[test]
    fn refuses_impossible_priors() {
        let bad = ParameterSet::new(vec![p(
            "x",
            1.0,
            Prior::Uniform {
                lower: 2.0,
                upper: 1.0,
            },
        )]);
        assert!(matches!(bad, Err(ParamError::EmptyRange { .. })));
        let bad = ParameterSet::new(vec![p(
            "x",
            1.0,
            Prior::LogUniform {
                lower: 0.0,
                upper: 2.0,
            },
        )]);
        assert!(matches!(bad, Err(ParamError::BadPrior { .. })));
        let bad = ParameterSet::new(vec![p(
            "x",
            5.0,
            Prior::Uniform {
                lower: 0.0,
                upper: 2.0,
            },
        )]);
        assert!(matches!(bad, Err(ParamError::OutsideRange { .. })));
        let bad = ParameterSet::new(vec![
            p(
                "x",
                1.0,
                Prior::Uniform {
                    lower: 0.0,
                    upper: 2.0,
                },
            ),
            p(
                "x",
                1.0,
                Prior::Uniform {
                    lower: 0.0,
                    upper: 2.0,
                },
            ),
        ]);
        assert!(matches!(bad, Err(ParamError::Duplicate(_))));
    }

    #[test]
    fn periodic_parameters_wrap() {
        let set = ParameterSet::new(vec![p(
            "lam",
            370.0,
            Prior::Periodic {
                lower: 0.0,
                upper: 360.0,
            },
        )])
        .unwrap();
        let u = set.start_unconstrained();
        assert!((u[0] - 10.0).abs() < 1e-12);
        let full = set.full_from_unconstrained(&[725.0]).unwrap();
        assert!((full[0] - 5.0).abs() < 1e-12);
        assert_eq!(set.ln_prior(&full), 0.0);
    }

    #[test]
    fn sqrt_basis() {
        let (sc, ss) = sqrt_basis_from_ecc_omega(0.3, 2.0);
        let (e, w) = ecc_omega_from_sqrt_basis(sc, ss).unwrap();
        assert!((e - 0.3).abs() < 1e-15 && (w - 2.0).abs() < 1e-14);
        assert!(ecc_omega_from_sqrt_basis(0.8, 0.7).is_none());
    }
}
