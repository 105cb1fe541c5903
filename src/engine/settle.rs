//! Settling a set of parameter values before a solve: derived values
//! (drift, matched networks) computed from the others, and, for a budget
//! modelled as null-trimmed, the trimmed resistor adjusted to its null.
//!
//! A null trim adjusts one resistor `R` of a unit until the common-mode
//! output at DC is zero at the reference temperature. The DC conversion is
//! real and smooth in `R`, so the null is found by the secant method from
//! the value as drawn; the result then misses the null by the trim's
//! residual, `R × (1 + r)`, and drifts with temperature like any resistor.

use super::chain::{chain_response, EngineError};
use crate::model::Budget;
use crate::stage::Point;

/// Secant steps at most.
const MAX_STEPS: usize = 30;
/// The DC conversion counted as nulled.
const NULLED: f64 = 1e-16;

/// Make `values` ready for a solve `delta_t` kelvin from the reference:
/// apply the budget's null trim (when it has one) at the reference
/// temperature, then compute every derived value at `delta_t`.
pub fn settle(budget: &Budget, values: &mut [f64], delta_t: f64) -> Result<(), EngineError> {
    let parameters = &budget.parameters;
    let Some(trim) = budget.null_trim else {
        parameters.resolve(values, delta_t);
        return Ok(());
    };
    let id = trim.adjusted.0;
    let dc_conversion = |values: &mut [f64], r: f64| -> Result<f64, EngineError> {
        values[id] = r;
        parameters.resolve(values, 0.0);
        Ok(chain_response(&budget.chain, &Point::new(0.0, values))?
            .conversion()
            .re)
    };
    let mut x0 = values[id];
    let mut f0 = dc_conversion(values, x0)?;
    let mut x1 = x0 * (1.0 + 1e-4);
    let mut f1 = dc_conversion(values, x1)?;
    for _ in 0..MAX_STEPS {
        if f1.abs() < NULLED || f1 == f0 {
            break;
        }
        let x2 = x1 - f1 * (x1 - x0) / (f1 - f0);
        (x0, f0) = (x1, f1);
        x1 = x2;
        f1 = dc_conversion(values, x1)?;
        if ((x1 - x0) / x1).abs() < 1e-15 {
            break;
        }
    }
    values[id] = x1 * (1.0 + values[trim.residual.0]);
    parameters.resolve(values, delta_t);
    Ok(())
}
