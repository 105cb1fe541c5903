//! The three-op-amp instrumentation amplifier.
//!
//! First stage: A1 follows the p pin, A2 the n pin; RF1 from A1's output
//! (o1) to its inverting input (y1), RF2 likewise for A2 (o2, y2), and RG
//! between y1 and y2. Second stage: a four-resistor difference amplifier
//! ([`DifferenceAmp`]) with o1 on its p side and o2 on its n side.
//!
//! Exact solve of the first stage, with each op-amp as in [`super::OpAmp`]
//! (`v_o/A = (1 + c/2) v+ − (1 − c/2) v−`), four unknowns o1, o2, y1, y2:
//!
//! - `o1/A1 + (1 − c1/2) y1 = (1 + c1/2) v_p`, likewise for A2 with v_n;
//! - `(y1 − o1)/RF1 + (y1 − y2)/RG = 0`, `(y2 − o2)/RF2 + (y2 − y1)/RG = 0`.
//!
//! With ideal op-amps the common-mode gain of the first stage is exactly 1
//! whatever RF1 and RF2 are, and the differential gain is
//! `G1 = 1 + (RF1 + RF2)/RG`; the difference stage's conversion is then
//! divided by G1 when referred to the input. The first stage's own
//! conversion comes from its op-amps differing:
//! `1/CMRR_first ≈ (c1 − c2) + (1/A1(jf) − 1/A2(jf))`, independent of G1
//! (checked in the tests). Op-amp outputs are ideal sources, so the
//! difference stage does not load the first.

use super::{DifferenceAmp, OpAmp, PinShunt, Point, Probe, SingularStage, StageSolve};
use crate::engine::linalg::{Mat2, NodalSystem, Node, C64};
use crate::model::ParamId;

/// A three-op-amp instrumentation amplifier.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ThreeOpAmpInAmp {
    /// The gain resistor between the two inverting inputs.
    pub rg: ParamId,
    /// A1's feedback resistor.
    pub rf1: ParamId,
    /// A2's feedback resistor.
    pub rf2: ParamId,
    /// A1 (p side) and A2 (n side).
    pub first_stage: [OpAmp; 2],
    /// The input pins' shunts to ground (op-amp common-mode input R and C).
    pub pins: [PinShunt; 2],
    /// The output difference amplifier, with its op-amp A3.
    pub difference_stage: DifferenceAmp,
}

impl ThreeOpAmpInAmp {
    /// The first stage's transfer: `[o1, o2] = F [v_p, v_n]`.
    pub fn first_stage_transfer(&self, point: &Point) -> Result<Mat2, SingularStage> {
        let (o1, o2, y1, y2) = (Node::At(0), Node::At(1), Node::At(2), Node::At(3));
        let g_rg = C64::new(1.0 / point.value(self.rg), 0.0);
        let g_rf = [
            C64::new(1.0 / point.value(self.rf1), 0.0),
            C64::new(1.0 / point.value(self.rf2), 0.0),
        ];
        let mut system = NodalSystem::new(4);
        for (side, (output, inverting)) in [(o1, y1), (o2, y2)].into_iter().enumerate() {
            let opamp = &self.first_stage[side];
            let c = opamp.inverse_cmrr(point);
            // The op-amp's equation stands in the row of its output node.
            system.coupling(output, output, opamp.inverse_gain(point));
            system.coupling(output, inverting, 1.0 - c / 2.0);
            system.input_term(output, side, 1.0 + c / 2.0);
            // KCL at the inverting input.
            system.coupling(inverting, inverting, g_rf[side] + g_rg);
            system.coupling(inverting, output, -g_rf[side]);
        }
        system.coupling(y1, y2, -g_rg);
        system.coupling(y2, y1, -g_rg);
        let solution = system.solve().ok_or(SingularStage {
            stage: "three-op-amp instrumentation amplifier",
            freq_hz: point.freq_hz,
        })?;
        Ok(Mat2::new(
            solution[0][0],
            solution[0][1],
            solution[1][0],
            solution[1][1],
        ))
    }
}

impl StageSolve for ThreeOpAmpInAmp {
    fn input_admittance(&self, point: &Point, _load: &Mat2) -> Mat2 {
        PinShunt::pair_admittance(&self.pins, point)
    }

    fn transfer(&self, point: &Point, load: &Mat2) -> Result<Mat2, SingularStage> {
        let first = self.first_stage_transfer(point)?;
        let second = self.difference_stage.transfer(point, load)?;
        Ok(second * first)
    }

    fn output_levels(&self, point: &Point, _load: &Mat2) -> [f64; 2] {
        [self.difference_stage.output_level(point), 0.0]
    }

    fn probes(&self, point: &Point, _load: &Mat2) -> Vec<Probe> {
        let Ok(first) = self.first_stage_transfer(point) else {
            return Vec::new();
        };
        let one = C64::new(1.0, 0.0);
        let zero = C64::new(0.0, 0.0);
        let mut probes = Vec::new();
        for (side, opamp) in self.first_stage.iter().enumerate() {
            let name = if side == 0 { "A1" } else { "A2" };
            if let Some(range) = opamp.input_range {
                let pin = if side == 0 { [one, zero] } else { [zero, one] };
                probes.push(range.probe(format!("{name} inputs"), pin, 0.0));
            }
            if let Some(range) = opamp.output_swing {
                probes.push(range.probe(format!("{name} output"), first.0[side], 0.0));
            }
        }
        // A3's nodes, per volt at o1 and o2, carried back to the pins.
        for probe in self.difference_stage.opamp_probes(point, "A3") {
            let [a, b] = probe.coefficients;
            let through = [
                a * first.0[0][0] + b * first.0[1][0],
                a * first.0[0][1] + b * first.0[1][1],
            ];
            probes.push(Probe {
                coefficients: through,
                ..probe
            });
        }
        probes
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::engine::MixedMode;
    use approx::assert_relative_eq;

    fn inamp(opamps: [OpAmp; 2]) -> ThreeOpAmpInAmp {
        ThreeOpAmpInAmp {
            rg: ParamId(0),
            rf1: ParamId(1),
            rf2: ParamId(2),
            first_stage: opamps,
            pins: [PinShunt::default(); 2],
            difference_stage: DifferenceAmp {
                r1: ParamId(3),
                r2: ParamId(3),
                r3: ParamId(3),
                r4: ParamId(3),
                reference_resistance: None,
                reference_voltage: 0.0,
                opamp: OpAmp::default(),
            },
        }
    }

    #[test]
    fn first_stage_common_mode_gain_is_one_with_ideal_opamps() {
        // Whatever RF1 and RF2 are (mismatched here), common mode passes
        // with gain exactly 1 and the differential gain is 1 + (RF1+RF2)/RG
        // (common practice, no source; the classic three-op-amp result).
        let values = [1e3, 24.9e3, 25.3e3, 10e3];
        let stage = inamp([OpAmp::default(); 2]);
        let first = stage
            .first_stage_transfer(&Point::new(0.0, &values))
            .unwrap();
        let mm = MixedMode::from_nodes(&first);
        assert_relative_eq!(mm.cc.re, 1.0, max_relative = 1e-12);
        assert!(mm.dc.norm() < 1e-12);
        assert_relative_eq!(
            mm.dd.re,
            1.0 + (24.9e3 + 25.3e3) / 1e3,
            max_relative = 1e-12
        );
    }
}
