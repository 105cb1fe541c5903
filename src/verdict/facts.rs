//! What the report says about the stages beyond the budget: remarks on how
//! the file was read, and facts computed at nominal values.

use crate::model::{Budget, Parameter, Presentation, Variation};
use crate::quantity::{format_db, format_si, Dimension};
use crate::stage::{OpAmp, Point, StageKind};

/// How the budget was read where the file left something out.
/// What a switching source's residue leaves out, said wherever it is
/// reported.
pub const OUTSIDE_THE_SWITCHING_MODEL: &str = "switching residues are small-signal: slew-rate limiting, input overload and the recovery from it, and the common-mode transient immunity of isolated amplifiers are large-signal effects they do not include; check them against the parts' data and on the bench";

pub(crate) fn remarks(budget: &Budget) -> Vec<String> {
    let mut remarks = Vec::new();
    for stage in &budget.chain {
        let opamps: Vec<(&str, &OpAmp)> = match &stage.kind {
            StageKind::DifferenceAmp(amp) => vec![("op-amp", &amp.opamp)],
            StageKind::ThreeOpAmpInAmp(amp) => vec![
                ("A1", &amp.first_stage[0]),
                ("A2", &amp.first_stage[1]),
                ("A3", &amp.difference_stage.opamp),
            ],
            StageKind::IntegratedInAmp(amp) if amp.cmrr_reciprocal.is_none() => {
                remarks.push(format!(
                    "{}: no CMRR given, so the in-amp's own CMRR is taken as infinite",
                    stage.label
                ));
                Vec::new()
            }
            _ => Vec::new(),
        };
        for (who, opamp) in opamps {
            let mut ideal = Vec::new();
            if opamp.open_loop_gain.is_none() {
                ideal.push("infinite open-loop gain");
            }
            if opamp.gain_bandwidth_hz.is_none() {
                ideal.push("infinite gain-bandwidth");
            }
            if opamp.cmrr_reciprocal.is_none() {
                ideal.push("infinite CMRR");
            }
            if !ideal.is_empty() {
                remarks.push(format!(
                    "{}: {who} taken as ideal in: {}",
                    stage.label,
                    ideal.join(", ")
                ));
            }
        }
    }
    let exact: Vec<String> = budget
        .parameters
        .iter()
        .filter(|(_, p)| p.variation == Variation::Fixed && is_component(p))
        .map(|(_, p)| format!("{} ({})", p.name, budget.chain[p.stage].label))
        .collect();
    if !exact.is_empty() {
        remarks.push(format!(
            "taken as exact (no tolerance given): {}",
            exact.join(", ")
        ));
    }
    if !budget.switching.is_empty() {
        remarks.push(OUTSIDE_THE_SWITCHING_MODEL.to_string());
    }
    if has_body(budget) {
        remarks.push(BODY_COMMON_MODE.to_string());
    }
    remarks
}

/// What a budget with a body calls its common mode, said wherever its
/// figures are reported.
pub const BODY_COMMON_MODE: &str = "with a body, an interference source's amplitude is the mains voltage against earth and the CMRR figures are the rejection from it to the error referred to the input, the body's coupling included; the legs' resistance and capacitance are the electrodes";

/// Whether the chain starts with a body.
fn has_body(budget: &Budget) -> bool {
    matches!(budget.chain.first().map(|s| &s.kind), Some(StageKind::SourceNetwork(n)) if n.body.is_some())
}

/// Resistors and capacitors: parts whose tolerance a user normally states.
fn is_component(parameter: &Parameter) -> bool {
    matches!(
        parameter.presentation,
        Presentation::Value(Dimension::Resistance | Dimension::Capacitance)
    )
}

/// Facts computed at nominal values and the reference temperature: gains,
/// a pair's bias and tail, a converter's LSB.
pub(crate) fn facts(budget: &Budget) -> Vec<String> {
    let mut values = budget.parameters.nominal_values();
    // A trimmed chain's nominal facts are those of its trimmed values; a
    // chain that does not solve has no facts to state (the analyses that
    // follow report the failure).
    let _ = crate::engine::settle(budget, &mut values, 0.0);
    let point = Point::new(0.0, &values);
    let mut facts = Vec::new();
    for stage in &budget.chain {
        let label = &stage.label;
        match &stage.kind {
            StageKind::DifferenceAmp(amp) => facts.push(format!(
                "{label}: gain R2/R1 = {}",
                format_si(point.value(amp.r2) / point.value(amp.r1), "V/V")
            )),
            StageKind::ThreeOpAmpInAmp(amp) => {
                let g1 = 1.0 + (point.value(amp.rf1) + point.value(amp.rf2)) / point.value(amp.rg);
                let g2 =
                    point.value(amp.difference_stage.r2) / point.value(amp.difference_stage.r1);
                facts.push(format!(
                    "{label}: first-stage gain G1 = 1 + (RF1 + RF2)/RG = {}, difference stage {}, total {}",
                    format_si(g1, "V/V"),
                    format_si(g2, "V/V"),
                    format_si(g1 * g2, "V/V")
                ));
            }
            StageKind::IntegratedInAmp(amp) => {
                let mut text = format!("{label}: gain {}", format_si(amp.gain.gain(&point), "V/V"));
                if let Some(id) = amp.cmrr_reciprocal {
                    if let Variation::SignedBound { magnitude } =
                        budget.parameters.get(id).variation
                    {
                        text.push_str(&format!(
                            "; minimum CMRR at this gain {}",
                            format_db(-20.0 * magnitude.log10())
                        ));
                    }
                }
                facts.push(text);
            }
            StageKind::DifferentialPair(pair) => {
                let small = pair.small_signal(&point);
                let r_out = pair.tail_resistance(&point);
                let mut text = format!(
                    "{label}: gm {} and {}; tail output resistance {}",
                    format_si(small.gm[0], "S"),
                    format_si(small.gm[1], "S"),
                    format_si(r_out, "Ω")
                );
                if let Some(c) = pair.tail.capacitance {
                    let corner = 1.0 / (2.0 * std::f64::consts::PI * r_out * point.value(c));
                    text.push_str(&format!(
                        "; its {} takes over above {} (CMRR falls 20 dB/decade from there)",
                        format_si(point.value(c), "F"),
                        format_si(corner, "Hz")
                    ));
                }
                facts.push(text);
            }
            StageKind::Adc(adc) => facts.push(format!(
                "{label}: LSB {} ({} bits over {})",
                format_si(adc.lsb_volts(), "V"),
                adc.bits,
                format_si(adc.span_volts, "V")
            )),
            StageKind::SourceNetwork(_) => {}
        }
    }
    if let Some(fact) = bias_current_offset(budget) {
        facts.push(fact);
    }
    facts.extend(body_facts(budget, &values));
    facts
}

/// The body's common mode at each source, with and without the right-leg
/// drive, the drive's output, and the drive loop's phase margin.
fn body_facts(budget: &Budget, values: &[f64]) -> Vec<String> {
    let mut facts = Vec::new();
    for source in budget.interference.iter().filter(|s| s.frequency_hz > 0.0) {
        let Ok(Some(levels)) = crate::engine::body_levels(budget, values, source.frequency_hz)
        else {
            continue;
        };
        let amplitude = source.amplitude;
        let volts = |per_volt: f64| {
            crate::model::describe_volts(per_volt * amplitude.volts, amplitude.form)
        };
        let mut text = format!(
            "{}: the body sits at {} against the common",
            source.name,
            volts(levels.body)
        );
        if let (Some(undriven), Some(output)) = (levels.undriven, levels.drive_output) {
            text.push_str(&format!(
                " with the right-leg drive, {} with the reference electrode to the common instead ({} less); the drive's output swings {}",
                volts(undriven),
                format_db(20.0 * (undriven / levels.body).log10()),
                volts(output)
            ));
        }
        facts.push(text);
    }
    if let Ok(Some(crossing)) = crate::engine::loop_crossing(budget, values) {
        let mut text = format!(
            "right-leg drive loop: unity loop gain at {}, phase margin {:.1}°",
            format_si(crossing.frequency_hz, "Hz"),
            crossing.phase_margin_deg
        );
        if crossing.phase_margin_deg < 45.0 {
            text.push_str(
                " (under 45°: expect peaking and ringing in the common mode, or oscillation; common practice, no source)",
            );
        }
        facts.push(text);
    }
    facts
}

/// The offset the first amplifier's input bias current leaves through the
/// source's unequal DC resistances (not a CMRR term, but part of the same
/// imbalance): `Ib |R_p − R_n| + (Ios/2)(R_p + R_n)`, with each resistance
/// at the end of its tolerance that makes it worse.
fn bias_current_offset(budget: &Budget) -> Option<String> {
    let [first, second] = [budget.chain.first()?, budget.chain.get(1)?];
    let StageKind::SourceNetwork(network) = &first.kind else {
        return None;
    };
    let (bias, offset) = match &second.kind {
        StageKind::ThreeOpAmpInAmp(a) => (
            a.first_stage[0].input_bias_current,
            a.first_stage[0].input_offset_current,
        ),
        StageKind::IntegratedInAmp(a) => (a.input_bias_current, a.input_offset_current),
        _ => return None,
    };
    if bias.is_none() && offset.is_none() {
        return None;
    }
    let (bias, offset) = (bias.unwrap_or(0.0), offset.unwrap_or(0.0));
    let part = |id: crate::model::ParamId| {
        let p = budget.parameters.get(id);
        let tolerance = match p.variation {
            Variation::Relative { tolerance } => tolerance,
            _ => 0.0,
        };
        (p.nominal, tolerance)
    };
    let leg = |leg: &crate::stage::Leg| {
        let (mut r, mut spread) = match leg.source {
            crate::stage::SourceImpedance::Resistive { resistance, .. } => {
                let (r, t) = part(resistance);
                (r, r * t)
            }
            crate::stage::SourceImpedance::BridgeNode {
                upper_arm,
                lower_arm,
            } => {
                let ((a, ta), (b, tb)) = (part(upper_arm), part(lower_arm));
                let r = a * b / (a + b);
                (r, r * ta.max(tb))
            }
        };
        if let Some(series) = leg.series_resistance {
            let (rs, t) = part(series);
            r += rs;
            spread += rs * t;
        }
        (r, spread)
    };
    let ((rp, sp), (rn, sn)) = (leg(&network.legs[0]), leg(&network.legs[1]));
    let worst = bias * ((rp - rn).abs() + sp + sn) + offset / 2.0 * (rp + rn + sp + sn);
    Some(format!(
        "input bias current {} (offset current {}) through the source's DC resistances of {} and {} leaves up to {} of offset referred to the input (a DC error, not a CMRR term)",
        format_si(bias, "A"),
        format_si(offset, "A"),
        format_si(rp, "Ω"),
        format_si(rn, "Ω"),
        format_si(worst, "V")
    ))
}
