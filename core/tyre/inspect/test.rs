//! Tests of the tyre inspection: the curves are the model's own force
//! function, and the key figures reproduce the Magic Formula identities
//! (Pacejka, *Tire and Vehicle Dynamics*, ch. 4, general form).

use std::f64::consts::{FRAC_PI_2, PI};

use super::*;
use crate::error::{Classify, ErrorKind};
use crate::model::{Commands, SLIP_ANGLE, SLIP_RATIO, evaluate, straight_running};
use crate::params::{FRONT, REAR, load_vehicle};
use crate::tyre::MagicFormulaCoefficients;

/// A set with E = 0 and no shifts, for the closed-form identities (invented).
fn plain() -> MagicFormulaCoefficients {
    toml::from_str(
        "nominal_load_n = 4000.0\npCx1 = 1.65\npDx1 = 1.1\npKx1 = 20.0\n\
         pCy1 = 1.3\npDy1 = 0.95\npKy1 = 18.0\npKy2 = 2.0\n",
    )
    .unwrap()
}

fn plain_setup() -> TyreSetup {
    TyreSetup {
        model: TyreModel::new(&plain()),
        camber: 0.0,
        friction: 1.0,
        method: CombinedSlip::FrictionEllipse,
    }
}

/// The inspection's force is the vehicle model's: evaluate the model with
/// relaxed slips set on the left wheels of both axles and compare the tyre
/// forces it reports with the inspection's at the same slips and load, bit
/// for bit (demo crossover, invented data; the left wheel's camber is the
/// file's, the right wheel's is mirrored).
#[test]
fn force_is_the_vehicle_models_bit_for_bit() {
    let v = load_vehicle("scripts/vehicles/hybrid_crossover.toml".as_ref(), &[]).unwrap();
    let mut x = straight_running(&v, 25.0);
    for (wheel, kappa, tan_alpha) in [(0, 0.04, 0.05), (2, -0.07, 0.02)] {
        x[SLIP_RATIO + wheel] = kappa;
        x[SLIP_ANGLE + wheel] = tan_alpha;
    }
    let e = evaluate(&v, &x, &Commands::neutral(&v));
    for (wheel, axle) in [(0, FRONT), (2, REAR)] {
        let t = &v.tyres[axle];
        let setup = TyreSetup {
            model: t.model,
            camber: t.camber,
            friction: v.road.friction,
            method: t.combined_slip,
        };
        let w = &e.wheels[wheel];
        let (fx, fy) = setup.force(w.slip_ratio, w.tan_slip_angle, w.fz, t.combined_slip);
        assert_eq!(
            (fx.to_bits(), fy.to_bits()),
            (w.fx.to_bits(), w.fy.to_bits())
        );
        // A curve point at the same slip angle and load is the same call.
        let settings = InspectSettings {
            loads: vec![w.fz],
            combined_load: w.fz,
            combined_slip_angles: vec![w.tan_slip_angle.atan()],
            ..InspectSettings::around(w.fz)
        };
        let report = inspect(&setup, &settings).unwrap();
        let curve = &report.combined[0];
        for (k, &kappa) in curve.slip_ratio.iter().enumerate().step_by(10) {
            let (fx, fy) = setup.force(kappa, w.tan_slip_angle.atan().tan(), w.fz, t.combined_slip);
            assert_eq!((curve.fx[k], curve.fy[k]), (fx, fy));
        }
    }
}

/// At zero camber the pure-slip curves are the pure-slip Magic Formula
/// (Pacejka ch. 4) exactly, for both combined-slip methods.
#[test]
fn pure_curves_at_zero_camber_are_the_pure_formulas() {
    for method in [CombinedSlip::FrictionEllipse, CombinedSlip::MagicFormula] {
        let setup = TyreSetup {
            method,
            ..plain_setup()
        };
        let report = inspect(&setup, &InspectSettings::around(4000.0)).unwrap();
        for c in &report.longitudinal {
            for (k, f) in c.slip.iter().zip(&c.force) {
                assert_eq!(*f, setup.model.pure_longitudinal(*k, c.load, 1.0));
            }
        }
        for c in &report.lateral {
            for (a, f) in c.slip.iter().zip(&c.force) {
                let want = setup.model.pure_lateral(*a, c.load, 0.0, 1.0);
                assert!(
                    (f - want).abs() <= 1e-12 * want.abs().max(1.0),
                    "{f} vs {want}"
                );
            }
        }
    }
}

/// Magic Formula identities (Pacejka, *Tire and Vehicle Dynamics*, ch. 4,
/// y = D·sin{C·atan[B·x − E·(B·x − atan B·x)]}), on a set with E = 0 and no
/// shifts at its nominal load (dfz = 0):
/// - the peak is D for C ≥ 1: μx = pDx1, μy = pDy1;
/// - for E = 0 it lies where C·atan(B·x) = π/2: x = tan(π/(2C))/B with
///   B = K/(C·D);
/// - the slope at the origin is B·C·D = K: Kxκ = pKx1·Fz, Kyα =
///   pKy1·Fz0·sin(2·atan(Fz/(pKy2·Fz0))) (MF 5.2, from memory);
/// - for E = 0 the large-slip value is D·sin(C·π/2).
#[test]
fn key_figures_follow_magic_formula_identities() {
    let mf = plain();
    let setup = plain_setup();
    let fz = mf.nominal_load_n;
    let settings = InspectSettings {
        slip_ratio_max: 1e4,
        slip_angle_max: FRAC_PI_2 - 1e-9,
        ..InspectSettings::around(fz)
    };
    let report = inspect(&setup, &settings).unwrap();
    let k = report.at_nominal_load;
    assert_eq!(k.load, fz);
    assert!((k.peak_mu_x - mf.p_dx1).abs() < 1e-9, "{}", k.peak_mu_x);
    assert!((k.peak_mu_y - mf.p_dy1).abs() < 1e-9, "{}", k.peak_mu_y);
    let kx = mf.p_kx1 * fz;
    let ky = mf.p_ky1 * fz * (2.0 * (1.0 / mf.p_ky2).atan()).sin();
    assert!(
        (k.slip_stiffness / kx - 1.0).abs() < 1e-6,
        "{} vs {kx}",
        k.slip_stiffness
    );
    assert!(
        (k.cornering_stiffness / ky - 1.0).abs() < 1e-6,
        "{} vs {ky}",
        k.cornering_stiffness
    );
    let peak_at = |c: f64, d: f64, stiffness: f64| (PI / (2.0 * c)).tan() / (stiffness / (c * d));
    let kappa_peak = peak_at(mf.p_cx1, mf.p_dx1 * fz, kx);
    let alpha_peak = peak_at(mf.p_cy1, mf.p_dy1 * fz, ky).atan();
    assert!(
        (k.slip_ratio_at_peak / kappa_peak - 1.0).abs() < 1e-4,
        "{}",
        k.slip_ratio_at_peak
    );
    assert!(
        (k.slip_angle_at_peak / alpha_peak - 1.0).abs() < 1e-4,
        "{}",
        k.slip_angle_at_peak
    );
    let at_nominal = |curves: &[SlipCurve]| curves.iter().find(|c| c.load == fz).unwrap().clone();
    let fx_end = *at_nominal(&report.longitudinal).force.last().unwrap();
    let fy_end = *at_nominal(&report.lateral).force.last().unwrap();
    let fx_limit = mf.p_dx1 * fz * (mf.p_cx1 * FRAC_PI_2).sin();
    let fy_limit = mf.p_dy1 * fz * (mf.p_cy1 * FRAC_PI_2).sin();
    assert!(
        (fx_end / fx_limit - 1.0).abs() < 1e-3,
        "{fx_end} vs {fx_limit}"
    );
    assert!(
        (fy_end / fy_limit - 1.0).abs() < 1e-3,
        "{fy_end} vs {fy_limit}"
    );
}

/// The combined-slip envelope of the friction ellipse stays inside the
/// ellipse with semi-axes μx·Fz, μy·Fz (common practice; the method's
/// definition) and reaches it; both methods give the pure lateral force at
/// zero slip ratio (definition of a combined-slip model, Pacejka ch. 4).
#[test]
fn combined_envelopes_respect_the_ellipse() {
    let setup = plain_setup();
    let report = inspect(&setup, &InspectSettings::around(4000.0)).unwrap();
    let mut widest: f64 = 0.0;
    for c in &report.combined {
        let (mux, muy) = setup.model.peak_friction(c.load, 1.0);
        let pure = setup.model.pure_lateral(c.slip_angle, c.load, 0.0, 1.0);
        let middle = c.slip_ratio.len() / 2;
        assert_eq!(c.slip_ratio[middle], 0.0);
        assert!(
            (c.fy[middle] - pure).abs() < 1e-9 * pure.abs(),
            "{:?}",
            c.method
        );
        if c.method == CombinedSlip::FrictionEllipse {
            for (fx, fy) in c.fx.iter().zip(&c.fy) {
                let r = (fx / (mux * c.load)).hypot(fy / (muy * c.load));
                assert!(r <= 1.0 + 1e-12, "{r}");
                widest = widest.max(r);
            }
        }
    }
    assert!(widest > 0.99, "{widest}");
}

/// Bad settings are bad input.
#[test]
fn bad_settings_are_rejected() {
    let mut s = InspectSettings::around(4000.0);
    s.loads.push(-1.0);
    let e = inspect(&plain_setup(), &s).unwrap_err();
    assert_eq!(e.kind(), ErrorKind::BadInput);
    let mut s = InspectSettings::around(4000.0);
    s.slip_angle_max = 2.0;
    assert!(inspect(&plain_setup(), &s).is_err());
}

/// CSV: header and units rows, one row per point.
#[test]
fn csv_has_one_row_per_point() {
    let report = inspect(&plain_setup(), &InspectSettings::around(4000.0)).unwrap();
    let text = report.curves_csv(CombinedSlip::FrictionEllipse);
    let points: usize = report
        .longitudinal
        .iter()
        .map(|c| c.slip.len())
        .sum::<usize>()
        + report.lateral.iter().map(|c| c.slip.len()).sum::<usize>()
        + report.combined.iter().map(|c| c.fx.len()).sum::<usize>();
    assert_eq!(text.lines().count(), points + 2);
    assert!(text.starts_with("curve,method,load,slip_angle,slip_ratio,fx,fy\n,,N,rad,1,N,N\n"));
    let load = report.load_csv();
    assert_eq!(load.lines().count(), report.load_dependence.len() + 2);
}
