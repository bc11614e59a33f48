//! The four outcome probabilities of a scenario and the coverage figures derived from them.

use crate::prob::Estimate;

/// One of the four disjoint outcomes of a scenario (README.md "What the figures mean").
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Figure {
    /// `p_vd`: the safety requirement is violated and the checks detect it.
    ViolatedDetected,
    /// `p_vu`: violated and not detected, the residual.
    ViolatedUndetected,
    /// `p_sd`: not violated, yet a check fires (an alarm without violation).
    SafeDetected,
    /// `p_sq`: not violated and quiet.
    SafeQuiet,
}

impl Figure {
    /// All four, in report order.
    pub const ALL: [Figure; 4] = [
        Figure::ViolatedDetected,
        Figure::ViolatedUndetected,
        Figure::SafeDetected,
        Figure::SafeQuiet,
    ];

    /// The short key used in JSON and CSV.
    pub fn key(self) -> &'static str {
        match self {
            Figure::ViolatedDetected => "p_vd",
            Figure::ViolatedUndetected => "p_vu",
            Figure::SafeDetected => "p_sd",
            Figure::SafeQuiet => "p_sq",
        }
    }

    /// Whether the outcome violates the safety requirement.
    pub fn violated(self) -> bool {
        matches!(self, Figure::ViolatedDetected | Figure::ViolatedUndetected)
    }

    /// Whether the checks detect in this outcome.
    pub fn detected(self) -> bool {
        matches!(self, Figure::ViolatedDetected | Figure::SafeDetected)
    }
}

/// The four outcome probabilities, each with its error bound.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Outcome {
    /// `P(V and Det)`.
    pub p_vd: Estimate,
    /// `P(V and not Det)`, the residual.
    pub p_vu: Estimate,
    /// `P(not V and Det)`.
    pub p_sd: Estimate,
    /// `P(not V and not Det)`.
    pub p_sq: Estimate,
}

impl Outcome {
    /// An outcome from its four figures.
    pub fn from_fn(mut f: impl FnMut(Figure) -> Estimate) -> Self {
        Self {
            p_vd: f(Figure::ViolatedDetected),
            p_vu: f(Figure::ViolatedUndetected),
            p_sd: f(Figure::SafeDetected),
            p_sq: f(Figure::SafeQuiet),
        }
    }

    /// The estimate of one figure.
    pub fn get(&self, figure: Figure) -> Estimate {
        match figure {
            Figure::ViolatedDetected => self.p_vd,
            Figure::ViolatedUndetected => self.p_vu,
            Figure::SafeDetected => self.p_sd,
            Figure::SafeQuiet => self.p_sq,
        }
    }

    /// The same outcome with every error bound widened by `extra(figure)`.
    pub fn widened(&self, mut extra: impl FnMut(Figure) -> f64) -> Self {
        Self::from_fn(|f| {
            let e = self.get(f);
            Estimate::new(e.value, e.error + extra(f).abs())
        })
    }

    /// Probability of violation, `p_vd + p_vu`.
    pub fn violation(&self) -> Estimate {
        self.p_vd.add(self.p_vu)
    }

    /// Probability that the checks detect, `p_vd + p_sd` (for the baseline: the
    /// false-alarm probability).
    pub fn alarm(&self) -> Estimate {
        self.p_vd.add(self.p_sd)
    }

    /// `dc = p_vd / (p_vd + p_vu)`: the share of the dangerous outcomes that the checks catch
    /// (the DC of ISO 26262-5:2018, 8.4 and Annex D). `None` when no outcome is dangerous.
    /// The bound is the half-width of the interval that the bounds of `p_vd` and `p_vu`
    /// allow (interval arithmetic on the monotone ratio).
    pub fn dc(&self) -> Option<Estimate> {
        let (v, ev) = (self.p_vd.value.max(0.0), self.p_vd.error);
        let (u, eu) = (self.p_vu.value.max(0.0), self.p_vu.error);
        if v + u <= 0.0 {
            return None;
        }
        let centre = v / (v + u);
        let v_lo = (v - ev).max(0.0);
        let u_lo = (u - eu).max(0.0);
        let low = if v_lo + u + eu > 0.0 {
            v_lo / (v_lo + u + eu)
        } else {
            0.0
        };
        let high = if v + ev + u_lo > 0.0 {
            (v + ev) / (v + ev + u_lo)
        } else {
            1.0
        };
        Some(Estimate::new(centre, (centre - low).max(high - centre)))
    }

    /// `dc_all_dangerous = 1 - p_vu`: the coverage when every fault of the site counts as
    /// dangerous (the conservative FMEDA convention); the residual rate is `fit * p_vu`.
    pub fn dc_all_dangerous(&self) -> Estimate {
        Estimate::new(1.0 - self.p_vu.value, self.p_vu.error)
    }

    /// How far the four figures are from summing to one, and the bound they allow.
    pub fn sum(&self) -> Estimate {
        self.p_vd.add(self.p_vu).add(self.p_sd).add(self.p_sq)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dc_bound_contains_the_extreme_ratios() {
        // Interval arithmetic, checked by hand: v = 0.9 +- 0.01, u = 0.1 +- 0.01.
        let o = Outcome {
            p_vd: Estimate::new(0.9, 0.01),
            p_vu: Estimate::new(0.1, 0.01),
            p_sd: Estimate::zero(),
            p_sq: Estimate::zero(),
        };
        let dc = o.dc().unwrap();
        assert!((dc.value - 0.9).abs() < 1e-15);
        let low = 0.89 / (0.89 + 0.11);
        let high = 0.91 / (0.91 + 0.09);
        assert!(dc.value - dc.error <= low + 1e-15);
        assert!(dc.value + dc.error >= high - 1e-15);
    }

    #[test]
    fn dc_is_undefined_without_dangerous_outcomes() {
        let o = Outcome::from_fn(|f| {
            if f.violated() {
                Estimate::zero()
            } else {
                Estimate::exact(0.5)
            }
        });
        assert!(o.dc().is_none());
        assert_eq!(o.dc_all_dangerous().value, 1.0);
    }
}
