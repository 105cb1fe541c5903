//! Validation of a patient's body in the source network: its coupling,
//! the reference electrode and the right-leg drive.

use super::Validator;
use crate::budget::raw::{RawBody, RawDrive, RawElectrode, Scalar};
use crate::model::ParamId;
use crate::quantity::Dimension;
use crate::stage::{Body, Compensation, ReferenceElectrode, RightLegDrive};

impl Validator<'_> {
    /// The body; `None` (with the problems recorded) when any part is
    /// wrong. `has_input_resistance`: whether the pins have a resistance to
    /// the common (a DC return for a body with no reference electrode).
    pub(super) fn body(
        &mut self,
        raw: &RawBody,
        path: &str,
        stage: usize,
        has_input_resistance: bool,
    ) -> Option<Body> {
        let before = self.problems.len();
        let capacitance = |v: &mut Self, scalar: &Scalar, field: &str, name: &str| {
            v.part(
                scalar,
                &format!("{path}.{field}"),
                Dimension::Capacitance,
                name.into(),
                stage,
            )
        };
        let mains_coupling = capacitance(
            self,
            &raw.mains_coupling,
            "mains_coupling",
            "mains to body C",
        );
        let to_earth = capacitance(self, &raw.to_earth, "to_earth", "body to earth C");
        let common_to_earth = if raw.common_to_earth.0.trim() == "earthed" {
            None
        } else {
            capacitance(
                self,
                &raw.common_to_earth,
                "common_to_earth",
                "isolation C (common to earth)",
            )
            .map(Some)
            .unwrap_or_else(|| {
                if let Some(last) = self.problems.last_mut() {
                    let fix = last.fix.take().unwrap_or_default();
                    last.fix = Some(format!(
                        "{fix}; write `earthed` when the amplifier's common is connected to earth"
                    ));
                }
                None
            })
        };
        let mains_to_common = raw
            .mains_to_common
            .as_ref()
            .and_then(|c| capacitance(self, c, "mains_to_common", "mains to common C"));
        if raw.mains_to_common.is_some() && raw.common_to_earth.0.trim() == "earthed" {
            self.problem(
                &format!("{path}.mains_to_common"),
                "the mains' coupling to the common does nothing when the common is earthed",
                "remove `mains_to_common`, or give the isolation capacitance in `common_to_earth`",
            );
        }
        let reference_electrode = raw
            .reference_electrode
            .as_ref()
            .and_then(|e| self.electrode(e, &format!("{path}.reference_electrode"), stage));
        if raw.reference_electrode.is_none() && !has_input_resistance {
            self.problem(
                path,
                "with no reference electrode the body returns to the common only through the input pins, and they have no resistance to the common: the body's DC level is undefined",
                "add `reference_electrode: {resistance: 51k, capacitance: 47 nF}`, or give the pins' `input_resistance`",
            );
        }
        let drive = raw
            .drive
            .as_ref()
            .and_then(|d| self.drive(d, &format!("{path}.drive"), stage));
        if raw.drive.is_some() && raw.reference_electrode.is_none() {
            self.problem(
                &format!("{path}.drive"),
                "a right-leg drive drives the body through the reference electrode, and there is none",
                "add `reference_electrode: {resistance: …, capacitance: …}`, or remove `drive`",
            );
        }
        let electrode_offset = raw.electrode_offset.as_ref().and_then(|o| {
            self.plain_voltage(
                o,
                &format!("{path}.electrode_offset"),
                "write the largest DC difference between two electrodes, e.g. `300 mV`",
            )
            .map(f64::abs)
        });
        if self.problems.len() > before {
            return None;
        }
        Some(Body {
            mains_coupling: mains_coupling?,
            to_earth: to_earth?,
            common_to_earth,
            mains_to_common,
            reference_electrode,
            drive,
            electrode_offset: electrode_offset.unwrap_or(0.0),
        })
    }

    fn electrode(
        &mut self,
        raw: &RawElectrode,
        path: &str,
        stage: usize,
    ) -> Option<ReferenceElectrode> {
        let resistance = self.part(
            &raw.resistance,
            &format!("{path}.resistance"),
            Dimension::Resistance,
            "reference electrode R".into(),
            stage,
        );
        let capacitance = raw.capacitance.as_ref().and_then(|c| {
            self.part(
                c,
                &format!("{path}.capacitance"),
                Dimension::Capacitance,
                "reference electrode C".into(),
                stage,
            )
        });
        Some(ReferenceElectrode {
            resistance: resistance?,
            capacitance,
        })
    }

    fn drive(&mut self, raw: &RawDrive, path: &str, stage: usize) -> Option<RightLegDrive> {
        let frequency =
            |v: &mut Self, scalar: &Scalar, field: &str, name: &str| -> Option<ParamId> {
                v.part(
                    scalar,
                    &format!("{path}.{field}"),
                    Dimension::Frequency,
                    name.into(),
                    stage,
                )
            };
        let compensation = match (&raw.gain, &raw.corner, &raw.unity_gain) {
            (Some(gain), Some(corner), None) => {
                let gain = self.part(
                    gain,
                    &format!("{path}.gain"),
                    Dimension::Gain,
                    "drive gain".into(),
                    stage,
                );
                let corner = frequency(self, corner, "corner", "drive corner");
                Some(Compensation::SinglePole {
                    gain: gain?,
                    corner: corner?,
                })
            }
            (None, None, Some(unity)) => {
                frequency(self, unity, "unity_gain", "drive unity-gain frequency")
                    .map(|unity_gain| Compensation::Integrator { unity_gain })
            }
            (Some(_), None, None) => {
                self.problem(
                    &format!("{path}.gain"),
                    "a drive's gain falls above some frequency, and no `corner` is given",
                    "add `corner: …` (e.g. `corner: 100 Hz`), or give an integrator's `unity_gain: …` instead of `gain`",
                );
                None
            }
            (None, Some(_), None) => {
                self.problem(
                    &format!("{path}.corner"),
                    "a corner without a `gain`",
                    "add `gain: …` (from the pins' average to the drive's output, e.g. `gain: 39 V/V`)",
                );
                None
            }
            (None, None, None) => {
                self.problem(
                    path,
                    "the drive's gain is missing",
                    "give `gain: …` with `corner: …` (one pole), or `unity_gain: …` (an integrator)",
                );
                None
            }
            (_, _, Some(_)) => {
                self.problem(
                    &format!("{path}.unity_gain"),
                    "both an integrator's `unity_gain` and a `gain`/`corner` are given",
                    "keep one: `unity_gain: …` for an integrator, or `gain: …` with `corner: …`",
                );
                None
            }
        };
        let output_resistance = self.part(
            &raw.output_resistance,
            &format!("{path}.output_resistance"),
            Dimension::Resistance,
            "drive output R".into(),
            stage,
        );
        let sense_resistance = raw.sense_resistance.as_ref().and_then(|r| {
            self.part(
                r,
                &format!("{path}.sense_resistance"),
                Dimension::Resistance,
                "drive sense R".into(),
                stage,
            )
        });
        let output_range =
            self.voltage_range(raw.output_range.as_deref(), &format!("{path}.output_range"));
        Some(RightLegDrive {
            compensation: compensation?,
            output_resistance: output_resistance?,
            sense_resistance,
            output_range,
        })
    }
}
