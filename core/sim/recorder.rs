//! Output samples: times at exact multiples of the sample period, every
//! channel stored channel-major (one growing vector per channel, handed to the
//! results record without copying), and the interpolation of a step's samples
//! from a few exact evaluations.

use std::mem::MaybeUninit;

use super::channels::{ChannelTable, N_CHANNELS, Outputs, Row};

/// Interpolation nodes within a step, as fractions θ of the step: the
/// Chebyshev–Lobatto points (1 − cos(kπ/4))/2, k = 0..4 (ends included).
/// Polynomial interpolation through them is close to the best of its degree
/// (Trefethen, *Approximation Theory and Approximation Practice*, ch. 5 and
/// 15, from memory). The degree, 4, is that of Dopri5's dense output, so the
/// raw states are reproduced exactly and any other channel to the order of
/// the dense output itself.
pub const NODES: [f64; 5] = [
    0.0,
    0.146_446_609_406_726_24,
    0.5,
    0.853_553_390_593_273_8,
    1.0,
];

/// Number of interpolation nodes.
pub const N_NODES: usize = NODES.len();

/// 1 / Π_{m≠j} (θ_j − θ_m) for each node j: the Lagrange denominators.
const DENOMINATORS: [f64; N_NODES] = {
    let mut d = [1.0; N_NODES];
    let mut j = 0;
    while j < N_NODES {
        let mut m = 0;
        while m < N_NODES {
            if m != j {
                d[j] *= NODES[j] - NODES[m];
            }
            m += 1;
        }
        d[j] = 1.0 / d[j];
        j += 1;
    }
    d
};

/// Lagrange weights of the nodes at θ: value(θ) = Σ w_j·value(θ_j).
#[inline]
pub fn lagrange_weights(theta: f64) -> [f64; N_NODES] {
    // At a node exactly that node's value (a sample at a step's end is the
    // evaluation there, bit for bit).
    if let Some(j) = NODES.iter().position(|&t| t == theta) {
        return std::array::from_fn(|m| if m == j { 1.0 } else { 0.0 });
    }
    let x: [f64; N_NODES] = std::array::from_fn(|m| theta - NODES[m]);
    std::array::from_fn(|j| {
        let mut w = DENOMINATORS[j];
        for (m, xm) in x.iter().enumerate() {
            if m != j {
                w *= xm;
            }
        }
        w
    })
}

/// Where a step's interpolation is checked against an exact evaluation, as a
/// fraction of the step: midway between the nodes θ₁ and θ₂, in one of the two
/// widest gaps between nodes, where the interpolation error is largest.
pub const CHECK_POINT: f64 = 0.5 * (NODES[1] + NODES[2]);

/// Whether the degree-4 interpolant of every channel through `nodes` agrees
/// with `exact`, the channel values at [`CHECK_POINT`], to `tolerance` × the
/// channel's largest magnitude at the nodes and the check point. A corner
/// inside the step (a power limit reached, a brake fading out) bends the
/// interpolant away from the exact values; then the samples are evaluated one
/// by one.
///
/// On x86-64 processors with AVX2 the same code runs compiled for it, chosen
/// at run time as for the interpolation of samples; both builds do the same IEEE
/// operations in the same order (no fused multiply-add), so they give the
/// same answer (test `avx2_and_baseline_check_alike`).
pub fn interpolation_holds(nodes: &[Row; N_NODES], exact: &Row, tolerance: f64) -> bool {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2 (checked just above).
        return unsafe { interpolation_holds_avx2(nodes, exact, tolerance) };
    }
    interpolation_holds_baseline(nodes, exact, tolerance)
}

/// [`interpolation_holds`] compiled for AVX2.
///
/// # Safety
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn interpolation_holds_avx2(nodes: &[Row; N_NODES], exact: &Row, tolerance: f64) -> bool {
    interpolation_holds_lanes(nodes, exact, tolerance)
}

/// [`interpolation_holds`] compiled for the baseline of the target.
fn interpolation_holds_baseline(nodes: &[Row; N_NODES], exact: &Row, tolerance: f64) -> bool {
    interpolation_holds_lanes(nodes, exact, tolerance)
}

#[inline(always)]
fn interpolation_holds_lanes(nodes: &[Row; N_NODES], exact: &Row, tolerance: f64) -> bool {
    let w = lagrange_weights(CHECK_POINT);
    // Every channel checked, without an early exit: a loop over the channels
    // that the compiler turns into vector instructions.
    let mut holds = true;
    for c in 0..N_CHANNELS {
        let v = [
            nodes[0][c],
            nodes[1][c],
            nodes[2][c],
            nodes[3][c],
            nodes[4][c],
        ];
        let interpolated = w[0] * v[0] + w[1] * v[1] + w[2] * v[2] + w[3] * v[3] + w[4] * v[4];
        let scale = v.iter().fold(exact[c].abs(), |m, x| m.max(x.abs()));
        holds &= (interpolated - exact[c]).abs() <= tolerance * scale;
    }
    holds
}

/// The recorded samples.
pub(super) struct Recorder {
    rate: f64,
    /// Index of the next sample to record (its time is index / rate).
    next: u64,
    times: Vec<f64>,
    /// One vector per channel, in table order.
    data: Vec<Vec<f64>>,
    /// Lagrange weights of the samples of one step in blocks of
    /// [`LANES`] samples, zero past the last sample (scratch).
    weights: Vec<WeightBlock>,
    /// Samples interpolated ahead: the step's samples past those recorded,
    /// already written into every channel's spare capacity (see
    /// [`Recorder::push_interpolated`]).
    ahead: Option<Ahead>,
}

/// Samples of one step interpolated ahead of the ones recorded, waiting in
/// the spare capacity of every channel: the first `count` elements past each
/// channel's length hold samples `first`.. of the step ending at `t1`.
///
/// Invariant: while `ahead` is set, nothing but [`Recorder::push_interpolated`]
/// writes a channel or changes its capacity (every other writer and every
/// reservation drops it first).
#[derive(Debug, Clone, Copy, PartialEq)]
struct Ahead {
    /// Start and end of the step, s.
    t0: f64,
    t1: f64,
    /// Index of the first sample waiting.
    first: u64,
    /// Number of samples waiting.
    count: u64,
}

impl Recorder {
    pub fn new(rate: f64) -> Self {
        Self {
            rate,
            next: 0,
            times: Vec::new(),
            data: (0..N_CHANNELS).map(|_| Vec::new()).collect(),
            weights: Vec::new(),
            ahead: None,
        }
    }

    /// Time of sample `k`, s: k / rate (divided, not multiplied by the period,
    /// so that e.g. sample 35 at 200 Hz is exactly 0.175).
    pub fn time_of(&self, k: u64) -> f64 {
        k as f64 / self.rate
    }

    /// Index of the next sample to record.
    pub fn next_index(&self) -> u64 {
        self.next
    }

    /// Time of the next sample to record, s.
    pub fn next_time(&self) -> f64 {
        self.time_of(self.next)
    }

    /// Whether sample time `ts` counts as reached at `t` (a billionth of a
    /// period of slack for rounding).
    pub fn reached(&self, ts: f64, t: f64) -> bool {
        ts <= t + 1e-9 / self.rate
    }

    /// Whether the next sample is due at or before `t`.
    pub fn due(&self, t: f64) -> bool {
        self.reached(self.next_time(), t)
    }

    /// Number of samples due at or before `t` not yet recorded.
    pub fn count_due(&self, t: f64) -> u64 {
        let last = (t * self.rate + 1e-9).floor();
        if last < 0.0 || !last.is_finite() {
            return 0;
        }
        (last as u64 + 1).saturating_sub(self.next)
    }

    /// Makes room for every sample up to `t` (growing by doubling, as
    /// `Vec::reserve` does, when an `advance` call needs more).
    pub fn reserve_until(&mut self, t: f64) {
        let more = self.count_due(t) as usize;
        if self.times.capacity() - self.times.len() >= more {
            return;
        }
        // A reallocation keeps only the recorded samples.
        self.ahead = None;
        self.times.reserve(more);
        for d in &mut self.data {
            d.reserve(more);
        }
    }

    /// Makes room for exactly every sample up to `t` at once (no doubling:
    /// the caller knows how far the run goes).
    pub fn reserve_exact_until(&mut self, t: f64) {
        let more = self.count_due(t) as usize;
        if self.times.capacity() - self.times.len() >= more {
            return;
        }
        // A reallocation keeps only the recorded samples.
        self.ahead = None;
        self.times.reserve_exact(more);
        for d in &mut self.data {
            d.reserve_exact(more);
        }
    }

    /// Records the next sample from `outputs`.
    pub fn push(&mut self, outputs: &Outputs) {
        self.push_row(&ChannelTable::get().row(outputs));
    }

    /// Records the next sample from its channel values.
    pub fn push_row(&mut self, row: &Row) {
        self.ahead = None;
        self.times.push(self.next_time());
        for (d, v) in self.data.iter_mut().zip(row) {
            d.push(*v);
        }
        self.next += 1;
    }

    /// Records every sample due in (t0, `until`] by interpolating `nodes`,
    /// the channel values at the [`NODES`] of the step [t0, t1].
    ///
    /// The first call of a step interpolates every sample of the step that
    /// fits in the room already reserved, not only those due by `until`
    /// (with controller ticks inside a step, the samples after the tick are
    /// due at the next call): one pass over the channels per step instead of
    /// one per tick. The samples ahead wait in each channel's spare capacity
    /// and later calls of the same step only record them. A new step, or any
    /// other write, drops them (`Simulation` calls [`Recorder::new_step`]).
    pub fn push_interpolated(&mut self, t0: f64, t1: f64, until: f64, nodes: &[Row; N_NODES]) {
        let due = self.count_due(until);
        if due == 0 {
            return;
        }
        let waiting = self
            .ahead
            .is_some_and(|a| a.t0 == t0 && a.t1 == t1 && a.first == self.next && a.count >= due);
        if !waiting {
            self.interpolate_ahead(t0, t1, due, nodes);
        }
        for _ in 0..due {
            self.times.push(self.next_time());
            self.next += 1;
        }
        let ahead = self.ahead.as_mut().expect("interpolated just above");
        ahead.first += due;
        ahead.count -= due;
        for d in &mut self.data {
            // SAFETY: the `due` elements past the length were written by
            // `interpolate_ahead` (samples `first`..`first + count` of this
            // step, count ≥ due), and nothing has written the channel or
            // reallocated it since (the invariant of `Ahead`).
            unsafe { d.set_len(d.len() + due as usize) };
        }
    }

    /// Drops the samples interpolated ahead: the next step has other nodes.
    pub fn new_step(&mut self) {
        self.ahead = None;
    }

    /// Interpolates the step's samples from the next one on into the spare
    /// capacity of every channel: the `due` ones and as many more of the step
    /// as the reserved room holds (reserving only for the `due` ones, so that
    /// looking ahead never grows a channel).
    fn interpolate_ahead(&mut self, t0: f64, t1: f64, due: u64, nodes: &[Row; N_NODES]) {
        let in_step = self.count_due(t1).max(due) as usize;
        let room = self.room();
        let n = in_step.min(room).max(due as usize);
        // Room for the due samples (the look-ahead takes only what is there).
        let room = if room < n {
            for d in &mut self.data {
                d.reserve(n);
            }
            self.room()
        } else {
            room
        };
        self.weights.clear();
        self.weights
            .resize(n.div_ceil(LANES), [[0.0; LANES]; N_NODES]);
        for (s, k) in (self.next..self.next + n as u64).enumerate() {
            let w = lagrange_weights((self.time_of(k) - t0) / (t1 - t0));
            for (j, wj) in w.into_iter().enumerate() {
                self.weights[s / LANES][j][s % LANES] = wj;
            }
        }
        interpolate_channels(&mut self.data, &self.weights, n, room, nodes);
        self.ahead = Some(Ahead {
            t0,
            t1,
            first: self.next,
            count: n as u64,
        });
    }

    /// Spare capacity of the channel with the least, in samples.
    fn room(&self) -> usize {
        self.data
            .iter()
            .map(|d| d.capacity() - d.len())
            .min()
            .unwrap_or(0)
    }

    /// Records the next `rows.len()` samples from their channel values, all
    /// of one step together: channel-major, one pass per channel.
    pub fn push_rows(&mut self, rows: &[Row]) {
        self.ahead = None;
        for _ in rows {
            self.times.push(self.next_time());
            self.next += 1;
        }
        for (c, d) in self.data.iter_mut().enumerate() {
            d.extend(rows.iter().map(|row| row[c]));
        }
    }

    /// Sample times recorded so far, s.
    pub fn times(&self) -> &[f64] {
        &self.times
    }

    /// The samples of channel `index` recorded so far.
    pub fn channel(&self, index: usize) -> &[f64] {
        &self.data[index]
    }

    /// Times and channel vectors, for the results record.
    pub fn into_parts(self) -> (Vec<f64>, Vec<Vec<f64>>) {
        (self.times, self.data)
    }
}

/// Samples per block of interpolation weights: the width of an AVX2 vector
/// of `f64`.
pub(super) const LANES: usize = 4;

/// Lagrange weights of [`LANES`] consecutive samples, node-major:
/// `block[j][l]` is the weight of node j for sample l of the block.
pub(super) type WeightBlock = [[f64; LANES]; N_NODES];

/// Writes into the spare capacity of each channel of `data` (at least
/// `room` ≥ `n` elements in each) its `n` samples of one step, without
/// recording them (the length stays): sample s of channel c is Σ_j w_j(s)·nodes[j][c] with the
/// weights of sample s in `weights[s / LANES]`, lane s % LANES. Channel-major,
/// one pass per channel, a block of samples per vector operation; where the
/// reserved room holds the whole last block, the block is written whole
/// (values past the `n`th are written but not recorded), else its samples one
/// by one. A channel constant over the step (a held command) is copied.
///
/// On x86-64 processors with AVX2 the same code runs compiled for it (four
/// samples per instruction instead of two); both builds do the same IEEE
/// operations in the same order (no fused multiply-add), so the samples are
/// bit for bit the same (test `avx2_and_baseline_interpolate_alike`).
fn interpolate_channels(
    data: &mut [Vec<f64>],
    weights: &[WeightBlock],
    n: usize,
    room: usize,
    nodes: &[Row; N_NODES],
) {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2 (checked just above).
        return unsafe { interpolate_channels_avx2(data, weights, n, room, nodes) };
    }
    interpolate_channels_baseline(data, weights, n, room, nodes)
}

/// [`interpolate_channels`] with AVX2 instructions: a block of samples per
/// multiply and add (the same operations in the same order as the baseline:
/// the products summed from node 0 to node 4, no fused multiply-add).
///
/// # Safety
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn interpolate_channels_avx2(
    data: &mut [Vec<f64>],
    weights: &[WeightBlock],
    n: usize,
    room: usize,
    nodes: &[Row; N_NODES],
) {
    use std::arch::x86_64::{_mm256_add_pd, _mm256_loadu_pd, _mm256_mul_pd};
    use std::arch::x86_64::{_mm256_set1_pd, _mm256_storeu_pd};
    interpolate_channels_lanes(data, weights, n, room, nodes, |b, v, out| {
        let product = |j: usize| {
            // SAFETY: `b[j]` holds LANES = 4 values: one unaligned 256-bit load.
            _mm256_mul_pd(
                unsafe { _mm256_loadu_pd(b[j].as_ptr()) },
                _mm256_set1_pd(v[j]),
            )
        };
        let mut sum = product(0);
        for j in 1..N_NODES {
            sum = _mm256_add_pd(sum, product(j));
        }
        // SAFETY: `out` holds LANES = 4 elements: one unaligned 256-bit store.
        unsafe { _mm256_storeu_pd(out.as_mut_ptr().cast(), sum) };
    })
}

/// [`interpolate_channels`] for the baseline of the target.
fn interpolate_channels_baseline(
    data: &mut [Vec<f64>],
    weights: &[WeightBlock],
    n: usize,
    room: usize,
    nodes: &[Row; N_NODES],
) {
    interpolate_channels_lanes(data, weights, n, room, nodes, |b, v, out| {
        for (l, o) in out.iter_mut().enumerate() {
            o.write(sample(b, l, v));
        }
    })
}

/// Sample `l` of a block: Σ_j b[j][l]·v[j], summed from node 0 to node 4.
#[inline(always)]
fn sample(b: &WeightBlock, l: usize, v: &[f64; N_NODES]) -> f64 {
    b[0][l] * v[0] + b[1][l] * v[1] + b[2][l] * v[2] + b[3][l] * v[3] + b[4][l] * v[4]
}

/// The channel loop of [`interpolate_channels`]; `block` writes the
/// [`LANES`] samples of one weight block for node values `v`.
#[inline(always)]
fn interpolate_channels_lanes(
    data: &mut [Vec<f64>],
    weights: &[WeightBlock],
    n: usize,
    room: usize,
    nodes: &[Row; N_NODES],
    block: impl Fn(&WeightBlock, &[f64; N_NODES], &mut [MaybeUninit<f64>]),
) {
    assert!(weights.len() * LANES >= n && room >= n);
    // Whole blocks: all of them when the room holds the last one whole.
    let whole = if room >= weights.len() * LANES {
        weights.len()
    } else {
        n / LANES
    };
    for (c, d) in data.iter_mut().enumerate() {
        let v: [f64; N_NODES] = std::array::from_fn(|j| nodes[j][c]);
        let spare = &mut d.spare_capacity_mut()[..room];
        if v.iter().all(|x| x.to_bits() == v[0].to_bits()) {
            spare[..n].fill(MaybeUninit::new(v[0]));
            continue;
        }
        let (blocks, rest) = spare.split_at_mut(whole * LANES);
        for (out, b) in blocks.chunks_exact_mut(LANES).zip(weights) {
            block(b, &v, out);
        }
        for (s, o) in (whole * LANES..n).zip(rest) {
            o.write(sample(&weights[s / LANES], s % LANES, &v));
        }
    }
}

#[cfg(test)]
#[path = "recorder_tests.rs"]
mod tests;
