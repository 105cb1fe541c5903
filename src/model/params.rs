//! The flat table of circuit parameters.
//!
//! Every number a stage uses in its solve lives here, addressed by a
//! [`ParamId`]. The engine evaluates the chain against a slice of values (one
//! per parameter), so a contribution is "the nominal slice with one entry
//! moved to its extreme", and a later Monte Carlo or sizing pass only has to
//! fill a different slice: no stage is rebuilt, nothing is allocated per
//! evaluation.

use crate::quantity::{format_db, format_fraction, format_quantity, Dimension, SpreadShape};

/// Index of a parameter in [`Parameters`].
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct ParamId(pub usize);

/// How a parameter may differ from its nominal value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Variation {
    /// Known exactly (or treated so): no contribution.
    Fixed,
    /// Within `nominal × (1 ± tolerance)`; sign unknown.
    Relative {
        /// The relative tolerance, a fraction below 1.
        tolerance: f64,
    },
    /// Anywhere in `[-magnitude, +magnitude]` around a nominal of zero; used
    /// for quantities known only as a bound of unknown sign, such as the
    /// reciprocal of an op-amp's minimum CMRR.
    SignedBound {
        /// The bound on the magnitude.
        magnitude: f64,
    },
    /// Computed from other parameters by a [`Derivation`]; never varied
    /// itself.
    Derived,
}

/// How a parameter is shown to the user.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Presentation {
    /// A value in SI units of a dimension, with its tolerance.
    Value(Dimension),
    /// The reciprocal of a CMRR bound, shown as "≥ X dB, sign unknown".
    ReciprocalCmrr,
}

/// One circuit parameter.
#[derive(Debug, Clone, PartialEq)]
pub struct Parameter {
    /// Short name of the part or property, e.g. `R2` or `cable C (n leg)`.
    pub name: String,
    /// Index of the stage it belongs to, in chain order.
    pub stage: usize,
    /// The budget-file field it came from, e.g. `chain[1].r2`.
    pub field: String,
    /// The nominal value in SI units.
    pub nominal: f64,
    /// How it may vary.
    pub variation: Variation,
    /// How to print it.
    pub presentation: Presentation,
    /// How it spreads in production, when the file names it; otherwise the
    /// budget's default applies.
    pub shape: Option<SpreadShape>,
}

impl Parameter {
    /// The two extreme values it can take, or `None` when it is fixed.
    pub fn extremes(&self) -> Option<[f64; 2]> {
        match self.variation {
            Variation::Fixed | Variation::Derived => None,
            Variation::Relative { tolerance } => Some([
                self.nominal * (1.0 - tolerance),
                self.nominal * (1.0 + tolerance),
            ]),
            Variation::SignedBound { magnitude } => {
                Some([self.nominal - magnitude, self.nominal + magnitude])
            }
        }
    }

    /// Whether it varies, and so contributes to the budget.
    pub fn varies(&self) -> bool {
        self.extremes().is_some()
    }

    /// Its value and spread as an engineer would write them, e.g.
    /// `10.0 kΩ ±0.1 %` or `≥ 100.0 dB, sign unknown`.
    pub fn describe(&self) -> String {
        match (self.presentation, self.variation) {
            (Presentation::ReciprocalCmrr, Variation::SignedBound { magnitude }) => {
                format!("≥ {}, sign unknown", format_db(-20.0 * magnitude.log10()))
            }
            (Presentation::ReciprocalCmrr, _) => "ideal".to_string(),
            (Presentation::Value(dimension), variation) => {
                let value = format_quantity(self.nominal, dimension);
                match variation {
                    Variation::Relative { tolerance } => {
                        format!("{value} ±{}", format_fraction(tolerance))
                    }
                    Variation::SignedBound { magnitude } if self.nominal == 0.0 => {
                        format!("±{}, sign unknown", format_quantity(magnitude, dimension))
                    }
                    Variation::SignedBound { magnitude } => {
                        format!("{value} ±{}", format_quantity(magnitude, dimension))
                    }
                    Variation::Fixed | Variation::Derived => value,
                }
            }
        }
    }
}

/// A parameter computed from others:
/// `target = base × Π (1 + factor_j) × (1 + Σ coefficient_k × ΔT)`, ΔT
/// being the excursion from the budget's reference temperature. A resistor
/// in a matched network (its nominal, the network's shared error, its own
/// ratio error) with its temperature coefficients, or a device temperature
/// (coefficient 1/T_ref), are derived this way.
#[derive(Debug, Clone, PartialEq)]
pub struct Derivation {
    /// The derived parameter.
    pub target: ParamId,
    /// Its nominal value at the reference temperature.
    pub base: ParamId,
    /// Relative errors (nominal 0) that multiply it.
    pub factors: Vec<ParamId>,
    /// Temperature coefficients (1/K) that apply to it.
    pub coefficients: Vec<ParamId>,
}

/// All parameters of a budget, in the order the stages declared them.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Parameters {
    list: Vec<Parameter>,
    derivations: Vec<Derivation>,
}

impl Parameters {
    /// An empty table.
    pub fn new() -> Parameters {
        Parameters::default()
    }

    /// Add a parameter and return its id.
    pub fn add(&mut self, parameter: Parameter) -> ParamId {
        self.list.push(parameter);
        ParamId(self.list.len() - 1)
    }

    /// Name how a parameter spreads in production (from its tolerance's
    /// text).
    pub fn set_shape(&mut self, id: ParamId, shape: Option<SpreadShape>) {
        self.list[id.0].shape = shape;
    }

    /// The parameter with this id, to change (design searches vary
    /// nominal values and tolerances on a copy of the budget).
    pub fn get_mut(&mut self, id: ParamId) -> &mut Parameter {
        &mut self.list[id.0]
    }

    /// The parameter with this id.
    pub fn get(&self, id: ParamId) -> &Parameter {
        &self.list[id.0]
    }

    /// Every parameter, in id order.
    pub fn iter(&self) -> impl Iterator<Item = (ParamId, &Parameter)> {
        self.list.iter().enumerate().map(|(i, p)| (ParamId(i), p))
    }

    /// How many there are.
    pub fn len(&self) -> usize {
        self.list.len()
    }

    /// Whether there are none.
    pub fn is_empty(&self) -> bool {
        self.list.is_empty()
    }

    /// Add a derived parameter (its `variation` must be
    /// [`Variation::Derived`]) and the rule that computes it.
    pub fn add_derived(
        &mut self,
        parameter: Parameter,
        base: ParamId,
        factors: Vec<ParamId>,
        coefficients: Vec<ParamId>,
    ) -> ParamId {
        let target = self.add(parameter);
        self.derivations.push(Derivation {
            target,
            base,
            factors,
            coefficients,
        });
        target
    }

    /// The parameter a derived one is computed from (itself when it is not
    /// derived): the one to change to move its nominal value.
    pub fn base_of(&self, id: ParamId) -> ParamId {
        self.derivations
            .iter()
            .find(|d| d.target == id)
            .map_or(id, |d| self.base_of(d.base))
    }

    /// Recompute every derived value from the others at a temperature
    /// excursion `delta_t` (kelvin from the reference).
    pub fn resolve(&self, values: &mut [f64], delta_t: f64) {
        for derivation in &self.derivations {
            let coefficient: f64 = derivation.coefficients.iter().map(|c| values[c.0]).sum();
            let factor: f64 = derivation
                .factors
                .iter()
                .map(|f| 1.0 + values[f.0])
                .product();
            values[derivation.target.0] =
                values[derivation.base.0] * factor * (1.0 + coefficient * delta_t);
        }
    }

    /// The nominal values at a temperature excursion `delta_t`, indexed by
    /// [`ParamId`].
    pub fn values_at(&self, delta_t: f64) -> Vec<f64> {
        let mut values: Vec<f64> = self.list.iter().map(|p| p.nominal).collect();
        self.resolve(&mut values, delta_t);
        values
    }

    /// The nominal values at the reference temperature.
    pub fn nominal_values(&self) -> Vec<f64> {
        self.values_at(0.0)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn resistor(tolerance: f64) -> Parameter {
        Parameter {
            name: "R1".into(),
            stage: 0,
            field: "chain[0].r1".into(),
            nominal: 10e3,
            variation: Variation::Relative { tolerance },
            presentation: Presentation::Value(Dimension::Resistance),
            shape: None,
        }
    }

    #[test]
    fn extremes_and_description() {
        let p = resistor(1e-3);
        let [lo, hi] = p.extremes().unwrap();
        assert!((lo - 9990.0).abs() < 1e-9 && (hi - 10010.0).abs() < 1e-9);
        assert_eq!(p.describe(), "10.0 kΩ ±0.1 %");
        let bound = Parameter {
            nominal: 0.0,
            variation: Variation::SignedBound { magnitude: 1e-5 },
            presentation: Presentation::ReciprocalCmrr,
            shape: None,
            ..resistor(0.0)
        };
        assert_eq!(bound.describe(), "≥ 100.0 dB, sign unknown");
        assert_eq!(bound.extremes(), Some([-1e-5, 1e-5]));
    }
}
