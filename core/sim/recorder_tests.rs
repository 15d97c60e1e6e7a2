//! Tests of the output samples: interpolation weights, the check, the
//! reservations and the samples interpolated ahead.

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

/// Nodes of a step: smooth, different in every channel and step.
fn step_nodes(step: usize) -> [Row; N_NODES] {
    std::array::from_fn(|j| {
        std::array::from_fn(|c| (0.1 * (c + 3 * step) as f64 + NODES[j]).sin() * (c + 1) as f64)
    })
}

/// Steps of 13.7 ms recorded at 1 kHz: once in one call per step, once
/// in one call per 10 ms tick (samples interpolated ahead at the first
/// call of a step, recorded at the next): the same samples bit for bit,
/// and the look-ahead never grows a channel beyond an exact reservation.
#[test]
fn samples_ahead_are_the_samples() {
    let record = |ticks: bool| {
        let mut r = Recorder::new(1000.0);
        r.reserve_exact_until(0.2);
        let capacity = r.times.capacity();
        r.push_row(&[0.0; N_CHANNELS]);
        let (mut t0, mut tick, mut step) = (0.0_f64, 0.01, 0);
        while t0 < 0.2 {
            let t1 = t0 + 0.0137;
            r.new_step();
            let nodes = step_nodes(step);
            while ticks && tick < t1.min(0.2) {
                r.push_interpolated(t0, t1, tick, &nodes);
                tick += 0.01;
            }
            r.push_interpolated(t0, t1, t1.min(0.2), &nodes);
            (t0, step) = (t1, step + 1);
        }
        assert_eq!(r.times.capacity(), capacity);
        assert!(r.data.iter().all(|d| d.capacity() == capacity));
        r
    };
    let (per_step, per_tick) = (record(false), record(true));
    assert_eq!(per_tick.times(), per_step.times());
    assert_eq!(per_step.times().len(), 201);
    for c in 0..N_CHANNELS {
        let bits = |r: &Recorder| r.channel(c).iter().map(|x| x.to_bits()).collect::<Vec<_>>();
        assert_eq!(bits(&per_tick), bits(&per_step), "channel {c}");
    }
}

/// Samples waiting ahead are dropped by a new step and by any other
/// write: what is recorded next comes from the new step's nodes or the
/// row written.
#[test]
fn samples_ahead_are_dropped() {
    let exact = |nodes: &[Row; N_NODES], t0: f64, t1: f64, t: f64, c: usize| {
        let w = lagrange_weights((t - t0) / (t1 - t0));
        (0..N_NODES).map(|j| w[j] * nodes[j][c]).sum::<f64>()
    };
    let (a, b) = (step_nodes(0), step_nodes(7));
    let mut r = Recorder::new(1000.0);
    r.reserve_exact_until(0.1);
    r.push_row(&[0.0; N_CHANNELS]);
    // Step [0, 0.02] recorded to 0.01 (samples 11..20 wait), then a
    // restart at 0.01: step [0.01, 0.03] with other nodes.
    r.push_interpolated(0.0, 0.02, 0.01, &a);
    r.new_step();
    r.push_interpolated(0.01, 0.03, 0.015, &b);
    let t = r.times()[12];
    assert!((r.channel(5)[12] - exact(&b, 0.01, 0.03, t, 5)).abs() < 1e-12);
    // Samples 16..30 wait; a row written in between is recorded as such,
    // and the next call interpolates afresh.
    r.push_row(&[42.0; N_CHANNELS]);
    r.push_interpolated(0.01, 0.03, 0.03, &b);
    assert_eq!(r.channel(5)[16], 42.0);
    let t = r.times()[17];
    assert!((r.channel(5)[17] - exact(&b, 0.01, 0.03, t, 5)).abs() < 1e-12);
    assert_eq!(r.times().len(), 31);
    // Samples 36..50 wait; a reservation that moves the channels keeps
    // only what is recorded, and the rest is interpolated again.
    r.new_step();
    r.push_interpolated(0.03, 0.05, 0.035, &a);
    let moved = r.channel(5).as_ptr();
    r.reserve_until(10.0);
    assert_ne!(r.channel(5).as_ptr(), moved, "reallocated");
    r.push_interpolated(0.03, 0.05, 0.05, &a);
    for k in 36..=50 {
        let t = r.times()[k];
        assert!((r.channel(5)[k] - exact(&a, 0.03, 0.05, t, 5)).abs() < 1e-12);
    }
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
    let mut weights = vec![[[0.0; LANES]; N_NODES]; thetas.len().div_ceil(LANES)];
    for (s, &t) in thetas.iter().enumerate() {
        for (j, w) in lagrange_weights(t).into_iter().enumerate() {
            weights[s / LANES][j][s % LANES] = w;
        }
    }
    let n = thetas.len();
    // Room for exactly the samples (the last block sample by sample) and for
    // the whole last block.
    for room in [n, weights.len() * LANES] {
        let empty =
            || -> Vec<Vec<f64>> { (0..N_CHANNELS).map(|_| Vec::with_capacity(room)).collect() };
        // The samples written into the spare capacity, then recorded.
        let record = |data: &mut Vec<Vec<f64>>| {
            for d in data {
                // SAFETY: the interpolation wrote the first `n` elements of
                // the spare capacity.
                unsafe { d.set_len(n) };
            }
        };
        let mut baseline = empty();
        interpolate_channels_baseline(&mut baseline, &weights, n, room, &nodes);
        record(&mut baseline);
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
                    "room {room}, channel {c} sample {s}"
                );
            }
        }
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            let mut avx2 = empty();
            // SAFETY: the processor has AVX2 (checked just above).
            unsafe { interpolate_channels_avx2(&mut avx2, &weights, n, room, &nodes) };
            record(&mut avx2);
            assert_eq!(avx2, baseline, "room {room}: bit for bit (no NaN here)");
        }
    }
}
