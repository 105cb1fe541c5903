//! Safety cautions shown with a budget's results.

use crate::model::{describe_volts, Budget};

/// Common-mode voltages above these are treated as hazardous: 30 V rms
/// (42.4 V peak) alternating, 60 V direct. Common practice for the limits of
/// touch-safe extra-low voltage, from memory, no source; local codes govern.
const HAZARD_PEAK_AC_V: f64 = 42.4;
const HAZARD_DC_V: f64 = 60.0;

/// The cautions that apply to `budget`, in the order they are shown.
pub fn cautions(budget: &Budget) -> Vec<String> {
    let mut cautions = Vec::new();
    let hazardous = budget.interference.iter().find(|source| {
        if source.frequency_hz == 0.0 {
            source.amplitude.peak_volts() > HAZARD_DC_V
        } else {
            source.amplitude.peak_volts() > HAZARD_PEAK_AC_V
        }
    });
    // A switching common mode is hazardous where a level is beyond the
    // DC limit or its swing beyond the alternating one.
    let switching = budget.switching.iter().find(|s| {
        let w = &s.waveform;
        w.low_v.abs().max(w.high_v.abs()) > HAZARD_DC_V || w.step_v().abs() / 2.0 > HAZARD_PEAK_AC_V
    });
    if hazardous.is_some() || switching.is_some() || budget.safety.mains_referenced {
        let what = match (hazardous, switching) {
            (Some(source), _) => format!(
                "the common mode of `{}` ({}) is a hazardous voltage",
                source.name,
                describe_volts(source.amplitude.volts, source.amplitude.form)
            ),
            (None, Some(s)) => format!(
                "the common mode of `{}` switches between {} and {}, a hazardous voltage",
                s.name,
                crate::quantity::format_si(s.waveform.low_v, "V"),
                crate::quantity::format_si(s.waveform.high_v, "V")
            ),
            (None, None) => "the measured circuit is referred to the mains".to_string(),
        };
        cautions.push(format!(
            "CAUTION: {what}. Exceeding an amplifier's input common-mode range or absolute maximum \
             ratings gives wrong results or destroys it, and isolation may be needed. This tool \
             computes small-signal rejection only and does not assess electrical safety: follow \
             local electrical codes and licensed practice."
        ));
    }
    if budget.safety.patient_connected {
        cautions.push(
            "CAUTION: patient-connected amplifier. Electrical safety (isolation, leakage currents, \
             defibrillation protection) is governed by the applicable medical-electrical standards \
             and is outside what this tool assesses; defer to them and to licensed practice."
                .to_string(),
        );
    }
    cautions
}
