//! The chain solved from its stages' values: one composition, written over
//! [`Lane`], for a single analysis point and for many frequencies at once.
//!
//! From the last stage back, each stage is solved with the input admittance
//! of the stage after it as its load, and its transfer multiplied on from
//! the right, so the whole chain's transfer `T_k ··· T_1` is built in one
//! pass with nothing stored. At a single point ([`super::chain_response`])
//! each stage's transfer is checked and the denominators divided out at
//! the end. For many frequencies ([`ChainKernel`]), the conversion
//! `|ε|² = |Adc|²/|Add|²` is formed from the numerators alone, the
//! denominators cancelling; the per-frequency work runs on [`LANES`]
//! frequencies at once, compiled for the baseline instruction set and, when
//! the processor reports it, for 256-bit vectors, giving the same bits.

use super::chain::{chain_response, EngineError};
use super::lane::{Complexes, Lane, Reals, LANES};
use crate::stage::{
    AdcValues, Admittance, DifferenceValues, Frequency, IntegratedValues, Point, SmallSignal,
    SourceValues, Stage, StageValues, ThreeOpAmpValues, Transfer,
};

/// One stage of the backward pass: `values` solved driving `load`,
/// giving the next load (its input admittance) and its transfer, and
/// whether that transfer is usable (always true for lanes; see
/// [`Lane::usable_denominator`]). Lanes drop the denominator here, so it
/// is never computed.
#[inline(always)]
fn solved<N: Lane, S: SmallSignal>(
    values: &S,
    w: &Frequency<N>,
    load: &Admittance<N>,
) -> (Admittance<N>, Transfer<N>, bool) {
    let mut solved = values.solve(w, load);
    let usable = solved.transfer.usable();
    if !N::DENOMINATORS {
        solved.transfer.den = None;
    }
    (solved.input, solved.transfer, usable)
}

/// One step of the backward pass: solve `values` driving `load`, hand its
/// input admittance back as the next load, and multiply its transfer onto
/// `total` from the right. Returns whether the stage's own transfer is
/// usable.
#[inline(always)]
pub(crate) fn step<N: Lane>(
    values: &StageValues,
    w: &Frequency<N>,
    load: &mut Admittance<N>,
    total: &mut Option<Transfer<N>>,
) -> bool {
    let (input, transfer, usable) = solved(values, w, load);
    *load = input;
    *total = Some(match total {
        Some(after) => after.after(&transfer),
        None => transfer,
    });
    usable
}

/// The chain's transfer from its stages' values at `w`, last stage first.
#[inline(always)]
fn chain_transfer<N: Lane>(stages: &[StageValues], w: &Frequency<N>) -> Transfer<N> {
    let mut load = Admittance::open();
    let mut total = None;
    for values in stages.iter().rev() {
        step(values, w, &mut load, &mut total);
    }
    total.unwrap_or_else(Transfer::identity)
}

/// The smallest |Add|² (a numerator, so scaled by the product of every
/// denominator) whose ratio keeps full precision; below it the lane is
/// marked for the single-point solve, which divides stage by stage. (An
/// overflow shows as a result that is not finite, marked alike.)
const SMALLEST_PART_SQUARED: f64 = 1e-280;

/// |ε|² from the chain's transfer numerator; NaN in a lane whose |Add|²
/// fell below [`SMALLEST_PART_SQUARED`].
#[inline(always)]
fn conversion_squared_of(transfer: Transfer<Complexes>) -> Reals {
    let (dc, dd) = transfer.conversion_parts();
    let dd2 = dd.norm_sqr();
    let mut out = (dc.norm_sqr() / dd2).0;
    for (slot, &part) in out.iter_mut().zip(&dd2.0) {
        if part < SMALLEST_PART_SQUARED {
            *slot = f64::NAN;
        }
    }
    Reals(out)
}

/// The first (last in the chain) stage of a composition: its input
/// admittance and its transfer.
#[inline(always)]
fn last_stage<N: Lane, S: SmallSignal>(
    values: &S,
    w: &Frequency<N>,
) -> (Admittance<N>, Transfer<N>) {
    let (input, transfer, _) = solved(values, w, &Admittance::open());
    (input, transfer)
}

/// The stage before: solved driving `load`, its transfer multiplied onto
/// `total` from the right.
#[inline(always)]
fn earlier_stage<N: Lane, S: SmallSignal>(
    values: &S,
    w: &Frequency<N>,
    (load, total): (Admittance<N>, Transfer<N>),
) -> (Admittance<N>, Transfer<N>) {
    let (input, transfer, _) = solved(values, w, &load);
    (input, total.after(&transfer))
}

/// The kernels for the chain shapes the budget format most often builds,
/// each compiled on its own (for the baseline instruction set and for
/// AVX2) with every stage's kind known to the compiler, so what passes
/// from stage to stage stays in registers. `shaped` runs the one that
/// fits `stages` and says whether one did; any other shape takes the
/// general composition, the same solves chosen stage by stage.
macro_rules! shaped_kernels {
    ($( [$($variant:ident($x:ident: $ty:ty)),+] => [$last:ident $(, $earlier:ident)*] ),* $(,)?) => {
        #[allow(unsafe_code)] // the calls into the AVX2 builds
        fn shaped(wide: bool, stages: &[StageValues], frequencies: &[f64], out: &mut [f64]) -> bool {
            $(
                if let [$(StageValues::$variant($x)),+] = stages {
                    #[inline(always)]
                    fn numerator($($x: &$ty,)+ w: &Frequency<Complexes>) -> Transfer<Complexes> {
                        let state = last_stage($last, w);
                        $(let state = earlier_stage($earlier, w, state);)*
                        state.1
                    }
                    fn baseline($($x: &$ty,)+ frequencies: &[f64], out: &mut [f64]) {
                        blocks(|w| numerator($($x,)+ w), frequencies, out);
                    }
                    #[cfg(target_arch = "x86_64")]
                    #[target_feature(enable = "avx2")]
                    unsafe fn wide_build($($x: &$ty,)+ frequencies: &[f64], out: &mut [f64]) {
                        blocks(|w| numerator($($x,)+ w), frequencies, out);
                    }
                    #[cfg(target_arch = "x86_64")]
                    if wide {
                        // SAFETY: `wide` is set only when the processor
                        // reports AVX2.
                        unsafe { wide_build($($x,)+ frequencies, out) };
                        return true;
                    }
                    let _ = wide;
                    baseline($($x,)+ frequencies, out);
                    return true;
                }
            )*
            false
        }
    };
}

shaped_kernels! {
    [DifferenceAmp(a: DifferenceValues)] => [a],
    [ThreeOpAmpInAmp(a: ThreeOpAmpValues)] => [a],
    [IntegratedInAmp(a: IntegratedValues)] => [a],
    [SourceNetwork(s: SourceValues), DifferenceAmp(a: DifferenceValues)] => [a, s],
    [SourceNetwork(s: SourceValues), ThreeOpAmpInAmp(a: ThreeOpAmpValues)] => [a, s],
    [SourceNetwork(s: SourceValues), IntegratedInAmp(a: IntegratedValues)] => [a, s],
    [SourceNetwork(s: SourceValues), DifferenceAmp(a: DifferenceValues), Adc(c: AdcValues)] => [c, a, s],
    [SourceNetwork(s: SourceValues), ThreeOpAmpInAmp(a: ThreeOpAmpValues), Adc(c: AdcValues)] => [c, a, s],
    [SourceNetwork(s: SourceValues), IntegratedInAmp(a: IntegratedValues), Adc(c: AdcValues)] => [c, a, s],
}

/// The kernel over `frequencies` in blocks of [`LANES`], `numerator`
/// giving the chain's transfer numerator at a block; a short last block
/// repeats its last frequency in the unused lanes.
#[inline(always)]
fn blocks(
    numerator: impl Fn(&Frequency<Complexes>) -> Transfer<Complexes>,
    frequencies: &[f64],
    out: &mut [f64],
) {
    let solve =
        |lanes: [f64; LANES]| conversion_squared_of(numerator(&Frequency::new(Reals(lanes))));
    let mut f_blocks = frequencies.chunks_exact(LANES);
    let mut out_blocks = out.chunks_exact_mut(LANES);
    for (f_block, out_block) in (&mut f_blocks).zip(&mut out_blocks) {
        let lanes: [f64; LANES] = f_block.try_into().expect("a whole block");
        out_block.copy_from_slice(&solve(lanes).0);
    }
    let (f_rest, out_rest) = (f_blocks.remainder(), out_blocks.into_remainder());
    if let Some(&last) = f_rest.last() {
        let mut lanes = [last; LANES];
        for (lane, &f) in lanes.iter_mut().zip(f_rest) {
            *lane = f;
        }
        for (slot, value) in out_rest.iter_mut().zip(solve(lanes).0) {
            *slot = value;
        }
    }
}

/// The fast solve of a chain over many frequencies: the same stage solves
/// as a single point, several frequencies per instruction.
#[derive(Debug, Clone, Copy)]
pub struct ChainKernel {
    /// Whether the processor runs the 256-bit build.
    wide: bool,
}

impl Default for ChainKernel {
    fn default() -> ChainKernel {
        ChainKernel::new()
    }
}

impl ChainKernel {
    /// The kernel for this processor.
    pub fn new() -> ChainKernel {
        ChainKernel {
            wide: wide_vectors_available(),
        }
    }

    /// The baseline build, whatever the processor (for tests comparing the
    /// two builds).
    pub fn baseline() -> ChainKernel {
        ChainKernel { wide: false }
    }

    /// Every stage's frequency-independent values for one set of parameter
    /// values, into `into` (its allocation reused).
    pub fn prepare(&self, chain: &[Stage], values: &[f64], into: &mut Vec<StageValues>) {
        into.clear();
        into.extend(chain.iter().map(|stage| stage.kind.values(values)));
    }

    /// |ε|² of `chain` at each of `frequencies` (Hz) for settled `values`,
    /// into `out`: the stages prepared into `stages` (its allocation
    /// reused) and solved by the kernel; where the kernel has no finite
    /// answer, the single-point solve of the same equations says why (or,
    /// out of the kernel's range, answers).
    pub fn solve(
        &self,
        chain: &[Stage],
        values: &[f64],
        stages: &mut Vec<StageValues>,
        frequencies: &[f64],
        out: &mut [f64],
    ) -> Result<(), EngineError> {
        self.prepare(chain, values, stages);
        self.conversions_squared(stages, frequencies, out);
        for (slot, &freq) in out.iter_mut().zip(frequencies) {
            if !slot.is_finite() {
                *slot = chain_response(chain, &Point::new(freq, values))?
                    .conversion()
                    .norm_sqr();
            }
        }
        Ok(())
    }

    /// |ε|² at each of `frequencies` (Hz) for prepared stages, into `out`
    /// (the same length). A value that is not finite marks a frequency
    /// where the chain has no usable solution; the single-point solve
    /// ([`super::chain_response`]) says why.
    #[allow(unsafe_code)] // the one call into the AVX2 build, below
    pub fn conversions_squared(
        &self,
        stages: &[StageValues],
        frequencies: &[f64],
        out: &mut [f64],
    ) {
        assert_eq!(frequencies.len(), out.len(), "one result per frequency");
        if shaped(self.wide, stages, frequencies, out) {
            return;
        }
        #[cfg(target_arch = "x86_64")]
        if self.wide {
            // SAFETY: `wide` is set only when the running processor reports
            // AVX2 (see `wide_vectors_available`).
            unsafe { conversions_squared_avx2(stages, frequencies, out) };
            return;
        }
        each_block(stages, frequencies, out);
    }
}

/// Whether this processor can run the 256-bit build of the kernel.
fn wide_vectors_available() -> bool {
    #[cfg(target_arch = "x86_64")]
    {
        std::arch::is_x86_feature_detected!("avx2")
    }
    #[cfg(not(target_arch = "x86_64"))]
    {
        false
    }
}

/// The kernel compiled for 256-bit vectors.
///
/// # Safety
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
#[allow(unsafe_code)]
unsafe fn conversions_squared_avx2(stages: &[StageValues], frequencies: &[f64], out: &mut [f64]) {
    each_block(stages, frequencies, out);
}

/// The general kernel over `frequencies`: the stages' solves chosen stage
/// by stage.
#[inline(always)]
fn each_block(stages: &[StageValues], frequencies: &[f64], out: &mut [f64]) {
    blocks(|w| chain_transfer(stages, w), frequencies, out);
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::budget::load_budget;
    use crate::montecarlo::{Sampler, SplitMix64};

    /// The 256-bit build and the baseline build of the kernel give the same
    /// bits: each lane runs the same IEEE operations in the same order. So
    /// does a frequency alone and in a block.
    #[test]
    fn wide_and_baseline_builds_agree_to_the_bit() {
        let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("budgets");
        let frequencies: Vec<f64> = (0..23).map(|i| 10f64.powf(i as f64 * 0.3)).collect();
        let mut checked = 0;
        for entry in std::fs::read_dir(&root).unwrap() {
            let path = entry.unwrap().path();
            if path.extension().is_none_or(|e| e != "yaml") {
                continue;
            }
            let budget = load_budget(&path).unwrap();
            let kernel = ChainKernel::new();
            let sampler = Sampler::new(&budget);
            let mut values = budget.parameters.nominal_values();
            let mut stages = Vec::new();
            for trial in 0..20 {
                sampler.fill(&mut values, &mut SplitMix64::for_trial(3, trial));
                budget.parameters.resolve(&mut values, 0.0);
                kernel.prepare(&budget.chain, &values, &mut stages);
                let mut baseline = vec![0.0; frequencies.len()];
                ChainKernel::baseline().conversions_squared(&stages, &frequencies, &mut baseline);
                let mut chosen = vec![0.0; frequencies.len()];
                kernel.conversions_squared(&stages, &frequencies, &mut chosen);
                assert_eq!(baseline, chosen, "{}, trial {trial}", path.display());
                for (index, &f) in frequencies.iter().enumerate() {
                    let mut alone = [0.0];
                    kernel.conversions_squared(&stages, &[f], &mut alone);
                    assert_eq!(alone[0], baseline[index]);
                }
                checked += 1;
            }
        }
        assert!(checked >= 140, "{checked} trials checked");
    }
}
