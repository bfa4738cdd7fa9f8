//! Every random stream of the program, named in one place. A unit of work draws from the stream
//! of its kind and its index within it (a repeat, a round), derived from the master seed, so
//! that no two units share a stream and none depends on scheduling. The numbers are part of the
//! byte-identical promise: changing one changes the reports.

use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

/// A kind of random work. Each maps to a number ([`Stream::number`]); kinds that carry an
/// option's index or a mask of options take a range of numbers of their own.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Stream {
    /// 1: train/test splits of the baseline's trials, of the held-feature trials that repeat
    /// them, and of today's learning curves, which continue the stream for their nested orders
    /// (index: the repeat). Sharing the splits makes the curves' full-size anchor the
    /// baseline's trials, so every command reports one "today". (Number 2, once the curves'
    /// own splits, is retired.)
    BaselineSplits,
    /// 3: bootstrap draws over repeats behind every curve band.
    CurveBootstrap,
    /// 4: bootstrap draws of a pilot measured at its own size.
    PilotBootstrap,
    /// 100: the demo's applicants (under the demo's own seed); 200, 300 + k and 400 + k draw
    /// the populations its truth is checked on ([`Stream::DemoPopulation`]).
    DemoApplicants,
    /// 101: which demo rows carry each candidate feature.
    DemoPilots,
    /// 102: the extra survey columns of a scaled demo.
    DemoExtraColumns,
    /// A population drawn from the demo's generating model by its stream number (200 and up).
    DemoPopulation(u64),
    /// 1,000 + option: the with/without pilot curves of feature option `option` (< 1,000).
    PilotCurves(usize),
    /// 2,000 + option: the curves of rows option `option` (< 1,000) in which one group grows.
    GroupCurves(usize),
    /// 3,000: permutations of the held features (index: the repeat).
    Permutations,
    /// 4,000 + option: what a bigger pilot of feature option `option` (< 1,000) could show
    /// (index: the rows the pilot grows by).
    PilotAdvice(usize),
    /// 5,000 + mask: the joint re-scoring of the options in `mask` (bit i: option i mod 60).
    /// The range overlaps the backtest's numbers; no command uses both.
    JointRescoring(u64),
    /// 6,000: a backtest round's hold-out and pilots (index: the round).
    BacktestHoldOut,
    /// 7,000: a backtest's realised trials (index: round × 1,000 + repeat).
    BacktestRealised,
    /// 8,000: the rows a backtest's narrowing check adds to each pilot (index: the round).
    BacktestGrownPilots,
    /// A stream of a test or benchmark, by number; never used by a command.
    Check(u64),
}

impl Stream {
    /// The stream's number, mixed with the seed and the index in [`stream_rng`].
    pub fn number(self) -> u64 {
        match self {
            Stream::BaselineSplits => 1,
            Stream::CurveBootstrap => 3,
            Stream::PilotBootstrap => 4,
            Stream::DemoApplicants => 100,
            Stream::DemoPilots => 101,
            Stream::DemoExtraColumns => 102,
            Stream::DemoPopulation(n) => n,
            Stream::PilotCurves(option) => 1_000 + option as u64,
            Stream::GroupCurves(option) => 2_000 + option as u64,
            Stream::Permutations => 3_000,
            Stream::PilotAdvice(option) => 4_000 + option as u64,
            Stream::JointRescoring(mask) => 5_000 + mask,
            Stream::BacktestHoldOut => 6_000,
            Stream::BacktestRealised => 7_000,
            Stream::BacktestGrownPilots => 8_000,
            Stream::Check(n) => n,
        }
    }
}

/// The random generator of one unit of work: ChaCha8 seeded through SplitMix64 from the master
/// seed, the stream's number and the index within it.
pub fn stream_rng(seed: u64, stream: Stream, index: u64) -> ChaCha8Rng {
    let mut state = seed ^ stream.number().wrapping_mul(0xA076_1D64_78BD_642F);
    state = splitmix64(&mut state) ^ index.wrapping_mul(0xE703_7ED1_A0B4_28DB);
    let mut bytes = [0u8; 32];
    for chunk in bytes.chunks_mut(8) {
        chunk.copy_from_slice(&splitmix64(&mut state).to_le_bytes());
    }
    ChaCha8Rng::from_seed(bytes)
}

fn splitmix64(state: &mut u64) -> u64 {
    *state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::Rng;

    #[test]
    fn streams_differ_by_number_and_index_and_repeat_exactly() {
        let a: u64 = stream_rng(1, Stream::BaselineSplits, 0).gen();
        let b: u64 = stream_rng(1, Stream::BaselineSplits, 1).gen();
        let c: u64 = stream_rng(1, Stream::CurveBootstrap, 0).gen();
        assert!(a != b && a != c && b != c);
        assert_eq!(a, stream_rng(1, Stream::BaselineSplits, 0).gen::<u64>());
    }

    #[test]
    fn the_streams_of_a_plan_do_not_share_numbers() {
        // Every stream `acquest plan` can use with up to 999 options of each kind.
        let mut numbers = vec![
            Stream::BaselineSplits.number(),
            Stream::CurveBootstrap.number(),
            Stream::PilotBootstrap.number(),
            Stream::Permutations.number(),
        ];
        numbers.extend((0..999).map(|i| Stream::PilotCurves(i).number()));
        numbers.extend((0..999).map(|i| Stream::GroupCurves(i).number()));
        numbers.extend((0..999).map(|i| Stream::PilotAdvice(i).number()));
        numbers.extend((1..4096).map(|m| Stream::JointRescoring(m).number()));
        let count = numbers.len();
        numbers.sort_unstable();
        numbers.dedup();
        assert_eq!(numbers.len(), count);
    }
}
