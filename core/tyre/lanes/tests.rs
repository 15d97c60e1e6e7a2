//! The lanes against the scalar reference [`TyreModel::combined_tan`].

use super::*;
use crate::tyre::MagicFormulaCoefficients;

/// Invented coefficient sets (not measured data): a road tyre, a semi-slick,
/// and one with every shift, asymmetry and weighting coefficient non-zero so
/// that each term of both combined-slip methods is exercised.
const SETS: [&str; 3] = [
    "nominal_load_n = 4500.0\npCx1 = 1.6\npDx1 = 1.05\npDx2 = -0.07\npEx1 = 0.2\npEx2 = 0.1\n\
     pKx1 = 22.0\npKx3 = 0.15\npCy1 = 1.35\npDy1 = 1.0\npDy2 = -0.08\npDy3 = 0.5\npEy1 = -0.4\n\
     pEy2 = -0.2\npKy1 = 17.0\npKy2 = 1.8\npKy3 = 0.3\npVy3 = 0.05\nrBx1 = 12.0\nrBx2 = 9.0\n\
     rCx1 = 1.0\nrBy1 = 10.0\nrBy2 = 7.5\nrCy1 = 1.0\n",
    "nominal_load_n = 3000.0\npCx1 = 1.65\npDx1 = 1.4\npDx2 = -0.1\npKx1 = 28.0\npKx3 = 0.1\n\
     pCy1 = 1.4\npDy1 = 1.35\npDy2 = -0.1\npDy3 = 1.0\npEy1 = -0.6\npEy2 = -0.3\npKy1 = 27.5\n\
     pKy2 = 2.0\npKy3 = 0.5\npVy3 = 0.08\nrBx1 = 14.0\nrBx2 = 10.0\nrCx1 = 1.0\nrBy1 = 12.0\n\
     rBy2 = 8.0\nrCy1 = 1.0\n",
    "nominal_load_n = 4000.0\nlambda_fz0 = 1.1\nlambda_mux = 0.95\nlambda_muy = 1.05\n\
     pCx1 = 1.7\npDx1 = 1.1\npDx2 = -0.05\npEx1 = 0.3\npEx2 = -0.1\npEx3 = 0.05\npEx4 = 0.1\n\
     pKx1 = 20.0\npKx2 = 2.0\npKx3 = -0.2\npHx1 = 0.002\npHx2 = 0.001\npVx1 = 0.01\npVx2 = 0.005\n\
     pCy1 = 1.3\npDy1 = 0.95\npDy2 = -0.06\npDy3 = 2.0\npEy1 = -0.5\npEy2 = -0.1\npEy3 = 0.2\n\
     pEy4 = 0.5\npKy1 = 18.0\npKy2 = 2.0\npKy3 = 0.4\npHy1 = 0.003\npHy2 = 0.002\npHy3 = 0.05\n\
     pVy1 = 0.02\npVy2 = 0.01\npVy3 = 0.3\npVy4 = 0.1\nrBx1 = 13.0\nrBx2 = 9.5\nrCx1 = 0.95\n\
     rEx1 = 0.3\nrEx2 = -0.2\nrHx1 = 0.01\nrBy1 = 11.0\nrBy2 = 7.0\nrBy3 = 0.02\nrCy1 = 0.98\n\
     rEy1 = 0.2\nrEy2 = 0.1\nrHy1 = 0.01\nrHy2 = 0.005\nrVy1 = 0.05\nrVy2 = 0.02\nrVy3 = 0.3\n\
     rVy4 = 50.0\nrVy5 = 1.9\nrVy6 = 10.0\n",
];

/// Largest deviation allowed, relative to the peak force D + |SV| of each
/// direction at that load: a few hundred roundings. The approximations are
/// within 2–3 ulp ([`super::super::approx`]); the curve amplifies them by at
/// most its condition number, which is largest where B·x is large and E close
/// to 1 (atan(B·x) is subtracted from B·x).
const BOUND: f64 = 2e-14;

/// The same for slips beyond any physical use (|κ| > 2 or |tan α| > 3): the
/// MF weighting's cos(atan y) of the reference loses relative accuracy as
/// atan y approaches π/2 (an absolute error of one rounding of π/2, 2.2e-16,
/// against a value 1/y), where the lanes' 1/√(1 + y²) does not.
const BOUND_EXTREME: f64 = 2e-9;

/// Over a grid of slip ratios, slip angles, loads (zero load and beyond the
/// load cap included), cambers and friction scales, both combined-slip methods
/// and three coefficient sets, every lane equals the scalar reference within
/// [`BOUND`]; zero load or zero friction give exactly zero.
#[test]
fn lanes_equal_the_scalar_reference() {
    let kappas = [
        -1e7, -2.0, -0.5, -0.12, -0.03, -1e-4, -0.0, 0.0, 1e-9, 0.004, 0.05, 0.2, 0.9, 40.0,
    ];
    let tans = [
        -1e13,
        -3.0,
        -0.4,
        -0.08,
        -0.01,
        -1e-6,
        0.0,
        1e-12,
        0.02,
        0.1,
        0.35,
        1.5,
        1e6,
        f64::NAN,
    ];
    let loads = [
        -10.0, 0.0, 1e-3, 150.0, 1500.0, 3900.0, 6400.0, 12_000.0, 1e7,
    ];
    let cambers = [0.0, -0.02, 0.05, -0.12];
    let (mut worst, mut worst_extreme): (f64, f64) = (0.0, 0.0);
    for text in SETS {
        let mf: MagicFormulaCoefficients = toml::from_str(text).unwrap();
        assert!(mf.check().is_empty(), "{:?}", mf.check());
        let tyre = TyreModel::new(&mf);
        for method in [CombinedSlip::FrictionEllipse, CombinedSlip::MagicFormula] {
            for friction in [1.0, 0.35, 0.0] {
                for camber in cambers {
                    let gammas = [camber, -camber, 0.5 * camber, 0.01];
                    let lanes = TyreLanes::new([&tyre; 4], gammas, friction, [method; 4]);
                    for &fz in &loads {
                        for &k in &kappas {
                            for &t in &tans {
                                // Each lane gets a different point of the grid.
                                let kappa = [k, -k, 0.5 * k, k + 0.01];
                                let tan_alpha = [t, -t, 0.3 * t, t - 0.02];
                                let load = [fz, 0.7 * fz, 1.3 * fz, fz + 300.0];
                                let (fx, fy) = lanes.forces(&kappa, &tan_alpha, &load);
                                for i in 0..4 {
                                    let r = tyre.combined_tan(
                                        kappa[i],
                                        tan_alpha[i],
                                        gammas[i],
                                        load[i],
                                        friction,
                                        method,
                                    );
                                    if !(load[i] > 0.0 && friction > 0.0) {
                                        assert_eq!((fx[i], fy[i]), (0.0, 0.0));
                                        continue;
                                    }
                                    let (mux, muy) = tyre.peak_friction(load[i], friction);
                                    let f = load[i].min(100.0 * tyre.nominal_load());
                                    let scale_x = mux * f + r.fx.abs();
                                    let scale_y = muy * f + r.fy.abs();
                                    let rel = |a: f64, b: f64, scale: f64| {
                                        if a == b { 0.0 } else { (a - b).abs() / scale }
                                    };
                                    let (ex, ey) =
                                        (rel(fx[i], r.fx, scale_x), rel(fy[i], r.fy, scale_y));
                                    let extreme = kappa[i].abs() > 2.0 || tan_alpha[i].abs() > 3.0;
                                    let bound = if extreme { BOUND_EXTREME } else { BOUND };
                                    assert!(
                                        ex <= bound && ey <= bound,
                                        "{method:?} κ={} t={} γ={} Fz={} μ={friction}: \
                                         lanes ({}, {}) reference ({}, {}), errors {ex:e} {ey:e}",
                                        kappa[i],
                                        tan_alpha[i],
                                        gammas[i],
                                        load[i],
                                        fx[i],
                                        fy[i],
                                        r.fx,
                                        r.fy
                                    );
                                    if extreme {
                                        worst_extreme = worst_extreme.max(ex).max(ey);
                                    } else {
                                        worst = worst.max(ex).max(ey);
                                    }
                                }
                            }
                        }
                    }
                }
            }
        }
    }
    println!("largest deviation: {worst:e} of the peak force ({worst_extreme:e} at extreme slips)");
    assert!(worst > 0.0, "the lanes are a separate computation");
}

/// Lanes with different methods and tyres side by side give each lane's own
/// result (no mixing between lanes).
#[test]
fn mixed_lanes_are_independent() {
    let sets: Vec<MagicFormulaCoefficients> =
        SETS.iter().map(|t| toml::from_str(t).unwrap()).collect();
    let tyres: Vec<TyreModel> = sets.iter().map(TyreModel::new).collect();
    let methods = [
        CombinedSlip::FrictionEllipse,
        CombinedSlip::MagicFormula,
        CombinedSlip::MagicFormula,
        CombinedSlip::FrictionEllipse,
    ];
    let picks = [&tyres[0], &tyres[1], &tyres[2], &tyres[2]];
    let gammas = [0.02, -0.02, 0.03, -0.03];
    let lanes = TyreLanes::new(picks, gammas, 0.9, methods);
    let (kappa, tan_alpha, fz) = (
        [0.03, -0.1, 0.2, 0.01],
        [0.05, 0.2, -0.1, 0.3],
        [3000.0, 5000.0, 2500.0, 7000.0],
    );
    let (fx, fy) = lanes.forces(&kappa, &tan_alpha, &fz);
    for i in 0..4 {
        let r = picks[i].combined_tan(kappa[i], tan_alpha[i], gammas[i], fz[i], 0.9, methods[i]);
        assert!(
            (fx[i] - r.fx).abs() <= 1e-9 && (fy[i] - r.fy).abs() <= 1e-9,
            "lane {i}"
        );
    }
}

/// The AVX2 build and the baseline build of the lanes do the same IEEE
/// operations: bit-identical forces over the grid (where the processor has AVX2).
#[test]
fn avx2_and_baseline_agree_bit_for_bit() {
    #[cfg(target_arch = "x86_64")]
    if std::arch::is_x86_feature_detected!("avx2") {
        for text in SETS {
            let mf: MagicFormulaCoefficients = toml::from_str(text).unwrap();
            let tyre = TyreModel::new(&mf);
            for method in [CombinedSlip::FrictionEllipse, CombinedSlip::MagicFormula] {
                let lanes =
                    TyreLanes::new([&tyre; 4], [0.01, -0.01, 0.03, -0.03], 0.9, [method; 4]);
                for i in -50..=50 {
                    let k = 0.02 * i as f64;
                    let kappa = [k, -k, 0.3 * k, k + 0.01];
                    let tan_alpha = [0.5 * k, k, -0.2 * k, 0.1];
                    let fz = [3000.0, 4500.0 + 10.0 * i as f64, 800.0, 9000.0];
                    let base = lanes.forces_baseline(&kappa, &tan_alpha, &fz);
                    // SAFETY: AVX2 checked above.
                    let avx2 = unsafe { lanes.forces_avx2(&kappa, &tan_alpha, &fz) };
                    for l in 0..4 {
                        assert_eq!(base.0[l].to_bits(), avx2.0[l].to_bits());
                        assert_eq!(base.1[l].to_bits(), avx2.1[l].to_bits());
                    }
                }
            }
        }
    }
}
