//! Output samples: times at exact multiples of the sample period, every
//! channel stored channel-major (one growing vector per channel, handed to the
//! results record without copying), and the interpolation of a step's samples
//! from a few exact evaluations.

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
/// at run time as for [`interpolate_channels`]; both builds do the same IEEE
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
    /// Lagrange weights of the samples of one step, node-major (scratch).
    weights: [Vec<f64>; N_NODES],
}

impl Recorder {
    pub fn new(rate: f64) -> Self {
        Self {
            rate,
            next: 0,
            times: Vec::new(),
            data: (0..N_CHANNELS).map(|_| Vec::new()).collect(),
            weights: Default::default(),
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
        self.times.push(self.next_time());
        for (d, v) in self.data.iter_mut().zip(row) {
            d.push(*v);
        }
        self.next += 1;
    }

    /// Records every sample due in (t0, `until`] by interpolating `nodes`,
    /// the channel values at the [`NODES`] of the step [t0, t1].
    pub fn push_interpolated(&mut self, t0: f64, t1: f64, until: f64, nodes: &[Row; N_NODES]) {
        self.weights.iter_mut().for_each(Vec::clear);
        while self.due(until) {
            let ts = self.next_time();
            let w = lagrange_weights((ts - t0) / (t1 - t0));
            for (column, wj) in self.weights.iter_mut().zip(w) {
                column.push(wj);
            }
            self.times.push(ts);
            self.next += 1;
        }
        let n = self.weights[0].len();
        if n == 0 {
            return;
        }
        let [w0, w1, w2, w3, w4] = &self.weights;
        let weights = [&w0[..n], &w1[..n], &w2[..n], &w3[..n], &w4[..n]];
        interpolate_channels(&mut self.data, weights, nodes);
    }

    /// Records the next `rows.len()` samples from their channel values, all
    /// of one step together: channel-major, one pass per channel.
    pub fn push_rows(&mut self, rows: &[Row]) {
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

/// Appends to each channel of `data` its samples of one step: sample s of
/// channel c is Σ_j weights[j][s]·nodes[j][c]. Channel-major, each channel's
/// samples in one pass over slices; a channel constant over the step (a held
/// command) is copied.
///
/// On x86-64 processors with AVX2 the same code runs compiled for it (four
/// samples per instruction instead of two); both builds do the same IEEE
/// operations in the same order (no fused multiply-add), so the samples are
/// bit for bit the same (test `avx2_and_baseline_interpolate_alike`).
fn interpolate_channels(data: &mut [Vec<f64>], weights: [&[f64]; N_NODES], nodes: &[Row; N_NODES]) {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2 (checked just above).
        return unsafe { interpolate_channels_avx2(data, weights, nodes) };
    }
    interpolate_channels_baseline(data, weights, nodes)
}

/// [`interpolate_channels`] compiled for AVX2.
///
/// # Safety
/// The processor must support AVX2.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
unsafe fn interpolate_channels_avx2(
    data: &mut [Vec<f64>],
    weights: [&[f64]; N_NODES],
    nodes: &[Row; N_NODES],
) {
    interpolate_channels_lanes(data, weights, nodes)
}

/// [`interpolate_channels`] compiled for the baseline of the target.
fn interpolate_channels_baseline(
    data: &mut [Vec<f64>],
    weights: [&[f64]; N_NODES],
    nodes: &[Row; N_NODES],
) {
    interpolate_channels_lanes(data, weights, nodes)
}

#[inline(always)]
fn interpolate_channels_lanes(
    data: &mut [Vec<f64>],
    weights: [&[f64]; N_NODES],
    nodes: &[Row; N_NODES],
) {
    let n = weights[0].len();
    let [w0, w1, w2, w3, w4] = weights;
    for (c, d) in data.iter_mut().enumerate() {
        let v: [f64; N_NODES] = std::array::from_fn(|j| nodes[j][c]);
        let start = d.len();
        if v.iter().all(|x| x.to_bits() == v[0].to_bits()) {
            d.resize(start + n, v[0]);
            continue;
        }
        d.reserve(n);
        let samples = w0.iter().zip(w1).zip(w2).zip(w3).zip(w4);
        for (out, ((((p0, p1), p2), p3), p4)) in d.spare_capacity_mut().iter_mut().zip(samples) {
            out.write(p0 * v[0] + p1 * v[1] + p2 * v[2] + p3 * v[3] + p4 * v[4]);
        }
        // SAFETY: the loop wrote the first n elements of the spare capacity
        // (reserved above, and every weight slice is n long).
        unsafe { d.set_len(start + n) };
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Lagrange weights sum to 1, pick the node at a node, and reproduce a
    /// polynomial of degree 4 exactly (interpolation through 5 points).
    #[test]
    fn weights_reproduce_quartics() {
        let p = |t: f64| 1.0 - 2.0 * t + 3.0 * t * t - 0.5 * t.powi(3) + 4.0 * t.powi(4);
        for k in 0..=20 {
            let theta = k as f64 / 20.0;
            let w = lagrange_weights(theta);
            assert!((w.iter().sum::<f64>() - 1.0).abs() < 1e-14);
            let value: f64 = w.iter().zip(NODES).map(|(w, t)| w * p(t)).sum();
            assert!((value - p(theta)).abs() < 1e-13, "θ = {theta}");
        }
        for (j, &tj) in NODES.iter().enumerate() {
            let w = lagrange_weights(tj);
            for (m, wm) in w.iter().enumerate() {
                assert_eq!(*wm, if m == j { 1.0 } else { 0.0 });
            }
        }
    }

    /// The check passes a smooth curve and fails a corner |θ − 0.6| inside
    /// the step.
    #[test]
    fn interpolation_check_finds_corners() {
        let check = |f: &dyn Fn(f64) -> f64| {
            let nodes: [Row; N_NODES] = std::array::from_fn(|j| [f(NODES[j]); N_CHANNELS]);
            interpolation_holds(&nodes, &[f(CHECK_POINT); N_CHANNELS], 1e-4)
        };
        assert!(check(&|t| 100.0 + (3.0 * t).sin()));
        assert!(!check(&|t| 100.0 + 10.0 * (t - 0.6).abs()));
        assert!(check(&|_| 0.0), "all zero");
    }

    #[test]
    fn counts_and_times() {
        let mut r = Recorder::new(200.0);
        assert_eq!(r.count_due(0.0), 1);
        assert_eq!(r.count_due(0.175), 36);
        r.push_row(&[0.0; N_CHANNELS]);
        assert_eq!(r.count_due(0.175), 35);
        assert_eq!(r.time_of(35), 0.175);
        assert!(r.due(0.005));
        assert!(!r.due(0.0049));
    }

    /// One exact reservation holds every sample up to its time: no growth
    /// while they are pushed, and a reservation for a time already covered
    /// changes nothing.
    #[test]
    fn exact_reservation_holds_the_samples() {
        let mut r = Recorder::new(200.0);
        r.reserve_exact_until(0.175);
        let capacity = r.times.capacity();
        assert!(capacity >= 36);
        assert!(r.data.iter().all(|d| d.capacity() >= 36));
        for _ in 0..36 {
            r.push_row(&[1.0; N_CHANNELS]);
        }
        r.reserve_exact_until(0.1);
        assert_eq!(
            r.times.capacity(),
            capacity,
            "no growth, nothing more reserved"
        );
        assert_eq!(r.times().len(), 36);
    }

    /// The AVX2 build of the interpolation check gives the baseline build's
    /// answer on random rows (a fixed-seed generator), with tolerances
    /// around each row's own error so that both answers occur.
    #[test]
    fn avx2_and_baseline_check_alike() {
        // xorshift64* (Vigna, "An experimental exploration of Marsaglia's
        // xorshift generators, scrambled", 2016): uniform in [-1, 1).
        let mut seed = 0x9e37_79b9_7f4a_7c15_u64;
        let mut uniform = move || {
            seed ^= seed >> 12;
            seed ^= seed << 25;
            seed ^= seed >> 27;
            let bits = seed.wrapping_mul(0x2545_f491_4f6c_dd1d) >> 11;
            bits as f64 / (1u64 << 52) as f64 - 1.0
        };
        let (mut held, mut failed) = (0, 0);
        for case in 0..400 {
            let magnitude = 10f64.powi(case % 13 - 6);
            let nodes: [Row; N_NODES] =
                std::array::from_fn(|_| std::array::from_fn(|_| magnitude * uniform()));
            // The exact row near the interpolant: small random deviations.
            let w = lagrange_weights(CHECK_POINT);
            let exact: Row = std::array::from_fn(|c| {
                let interpolated: f64 = (0..N_NODES).map(|j| w[j] * nodes[j][c]).sum();
                interpolated + 1e-4 * magnitude * uniform().powi(7)
            });
            let tolerance = 10f64.powi(-(case % 9) - 3);
            let baseline = interpolation_holds_baseline(&nodes, &exact, tolerance);
            if baseline {
                held += 1;
            } else {
                failed += 1;
            }
            assert_eq!(interpolation_holds(&nodes, &exact, tolerance), baseline);
            #[cfg(target_arch = "x86_64")]
            if std::arch::is_x86_feature_detected!("avx2") {
                // SAFETY: the processor has AVX2 (checked just above).
                let avx2 = unsafe { interpolation_holds_avx2(&nodes, &exact, tolerance) };
                assert_eq!(avx2, baseline, "case {case}");
            }
        }
        assert!(
            held > 20 && failed > 20,
            "both answers: {held} held, {failed} failed"
        );
    }

    /// The AVX2 build of the interpolation gives the baseline build's samples
    /// bit for bit, and both match the weighted sum written out (the same
    /// operations in the same order, no fused multiply-add).
    #[test]
    fn avx2_and_baseline_interpolate_alike() {
        // Node values of every kind: smooth, constant, signed, tiny and large.
        let nodes: [Row; N_NODES] = std::array::from_fn(|j| {
            std::array::from_fn(|c| match c % 4 {
                0 => (c as f64 * 0.37 + j as f64 * 1.1).sin() * 1e3,
                1 => 42.0,
                2 => -(j as f64 + 1.0) * 1e-9 * c as f64,
                _ => 1e12 / (j as f64 + c as f64 + 1.0),
            })
        });
        let thetas: Vec<f64> = (1..=13).map(|k| k as f64 / 13.0).collect();
        let columns: [Vec<f64>; N_NODES] =
            std::array::from_fn(|j| thetas.iter().map(|&t| lagrange_weights(t)[j]).collect());
        let weights: [&[f64]; N_NODES] = std::array::from_fn(|j| columns[j].as_slice());
        let mut baseline = vec![Vec::new(); N_CHANNELS];
        interpolate_channels_baseline(&mut baseline, weights, &nodes);
        for (c, samples) in baseline.iter().enumerate() {
            for (s, value) in samples.iter().enumerate() {
                let w: [f64; N_NODES] = std::array::from_fn(|j| columns[j][s]);
                let sum = w[0] * nodes[0][c]
                    + w[1] * nodes[1][c]
                    + w[2] * nodes[2][c]
                    + w[3] * nodes[3][c]
                    + w[4] * nodes[4][c];
                let expected = if c % 4 == 1 { 42.0 } else { sum };
                assert_eq!(
                    value.to_bits(),
                    expected.to_bits(),
                    "channel {c} sample {s}"
                );
            }
        }
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            let mut avx2 = vec![Vec::new(); N_CHANNELS];
            // SAFETY: the processor has AVX2 (checked just above).
            unsafe { interpolate_channels_avx2(&mut avx2, weights, &nodes) };
            assert_eq!(avx2, baseline, "bit for bit (no NaN in these samples)");
        }
    }
}
