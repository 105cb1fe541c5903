//! Validation of the op-amp based amplifier stages.

use super::{Range, Validator};
use crate::budget::raw::{RawDifferenceAmp, RawOpAmp};
use crate::model::{Parameter, Presentation, Variation};
use crate::quantity::Dimension;
use crate::stage::{DifferenceAmp, OpAmp, StageKind};

impl Validator<'_> {
    pub(super) fn difference_amp(
        &mut self,
        raw: &RawDifferenceAmp,
        path: &str,
        stage: usize,
    ) -> Option<StageKind> {
        let problems_before = self.problems.len();
        let r1 = self.part(
            &raw.r1,
            &format!("{path}.r1"),
            Dimension::Resistance,
            "R1".into(),
            stage,
        );
        let r2 = self.part(
            &raw.r2,
            &format!("{path}.r2"),
            Dimension::Resistance,
            "R2".into(),
            stage,
        );
        let r3 = self.part(
            &raw.r3,
            &format!("{path}.r3"),
            Dimension::Resistance,
            "R3".into(),
            stage,
        );
        let r4 = self.part(
            &raw.r4,
            &format!("{path}.r4"),
            Dimension::Resistance,
            "R4".into(),
            stage,
        );
        let reference_resistance = raw.reference_resistance.as_ref().and_then(|r| {
            self.part(
                r,
                &format!("{path}.reference_resistance"),
                Dimension::Resistance,
                "Rref".into(),
                stage,
            )
        });
        let opamp = match &raw.opamp {
            Some(opamp) => self.opamp(opamp, &format!("{path}.opamp"), stage),
            None => OpAmp::default(),
        };
        if self.problems.len() > problems_before {
            return None;
        }
        Some(StageKind::DifferenceAmp(DifferenceAmp {
            r1: r1?,
            r2: r2?,
            r3: r3?,
            r4: r4?,
            reference_resistance,
            opamp,
        }))
    }

    pub(super) fn opamp(&mut self, raw: &RawOpAmp, path: &str, stage: usize) -> OpAmp {
        let open_loop_gain = raw.open_loop_gain.as_ref().and_then(|g| {
            let gain_path = format!("{path}.open_loop_gain");
            let id = self.part(
                g,
                &gain_path,
                Dimension::Gain,
                "op-amp open-loop gain".into(),
                stage,
            )?;
            if self.parameters.get(id).nominal <= 1.0 {
                self.problem(
                    &gain_path,
                    format!(
                        "`{}` is not an op-amp's open-loop gain: it must exceed 1 V/V (0 dB)",
                        g.0.trim()
                    ),
                    "give the data-sheet DC gain, e.g. `120 dB` or `1M`",
                );
                return None;
            }
            Some(id)
        });
        let gain_bandwidth_hz = raw.gain_bandwidth.as_ref().and_then(|g| {
            self.part(
                g,
                &format!("{path}.gain_bandwidth"),
                Dimension::Frequency,
                "op-amp gain-bandwidth".into(),
                stage,
            )
        });
        let cmrr_reciprocal = raw.cmrr.as_ref().and_then(|c| {
            let cmrr_path = format!("{path}.cmrr");
            let q = self.quantity(c, &cmrr_path, Dimension::Decibels, Range::Positive, false)?;
            if q.value <= 1.0 {
                self.problem(
                    &cmrr_path,
                    format!(
                        "`{}` is not a usable CMRR: it must be above 0 dB",
                        c.0.trim()
                    ),
                    "give the data-sheet minimum, e.g. `100 dB`",
                );
                return None;
            }
            Some(self.parameters.add(Parameter {
                name: "op-amp CMRR".into(),
                stage,
                field: cmrr_path,
                nominal: 0.0,
                variation: Variation::SignedBound {
                    magnitude: 1.0 / q.value,
                },
                presentation: Presentation::ReciprocalCmrr,
            }))
        });
        let cmrr_corner_hz = raw.cmrr_corner.as_ref().and_then(|c| {
            let corner_path = format!("{path}.cmrr_corner");
            if raw.cmrr.is_none() {
                self.problem(
                    &corner_path,
                    "a CMRR corner is given without a CMRR",
                    "add `cmrr: …` (the DC minimum, e.g. `100 dB`) or remove `cmrr_corner`",
                );
                return None;
            }
            self.fixed(
                c,
                &corner_path,
                Dimension::Frequency,
                "op-amp CMRR corner".into(),
                stage,
            )
        });
        OpAmp {
            open_loop_gain,
            gain_bandwidth_hz,
            cmrr_reciprocal,
            cmrr_corner_hz,
        }
    }
}
