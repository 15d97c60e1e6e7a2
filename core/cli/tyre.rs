//! `yawdyn tyre VEHICLE [--axle front|rear] [...]`: inspect the tyres of a
//! vehicle file with the force function the model uses: key figures, or
//! `--json`; curves as CSV files (`--out DIR`) and SVG plots (`--plot DIR`).

use std::path::{Path, PathBuf};
use std::time::Instant;

use anyhow::Context;
use serde_json::{Value, json};
use yawdyn::params::{FRONT, REAR, Vehicle, load_vehicle};
use yawdyn::plot::{Axis, Series, lines, stacked};
use yawdyn::table::{Table, fmt_num};
use yawdyn::tyre::CombinedSlip;
use yawdyn::tyre::inspect::{InspectSettings, Inspection, LoadFigures, TyreSetup, inspect};

use super::values::parse_values;
use super::yaw_moment::short_name;
use super::{Outcome, parse_overrides};

/// Which axle's tyre.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
enum AxleChoice {
    /// The front tyre.
    Front,
    /// The rear tyre.
    Rear,
    /// Both.
    Both,
}

/// Arguments of `yawdyn tyre`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Vehicle parameter file (TOML).
    vehicle: PathBuf,
    /// Axle whose tyre to inspect.
    #[arg(long, value_enum, default_value = "both")]
    axle: AxleChoice,
    /// Loads of the pure-slip curves, N (V1,V2,... or START:STOP:COUNT).
    /// Default: 0.5, 1, 1.5 and 2 times the static wheel load.
    #[arg(long, allow_hyphen_values = true)]
    loads_n: Option<String>,
    /// Slip angles of the combined-slip envelopes, deg. Default 1,2,4,8.
    #[arg(long, default_value = "1,2,4,8", allow_hyphen_values = true)]
    slip_angles_deg: String,
    /// Override a parameter by dotted path (repeatable), e.g. `--set tyre.front.camber_deg=0`.
    #[arg(long = "set", value_name = "KEY=VALUE")]
    sets: Vec<String>,
    /// Write the curves and the load dependence as CSV files into this
    /// directory (`tyre_<axle>_curves.csv`, `tyre_<axle>_load.csv`).
    #[arg(long, value_name = "DIR")]
    out: Option<PathBuf>,
    /// Draw the curves as SVG files into this directory (`tyre_<axle>_*.svg`).
    #[arg(long, value_name = "DIR")]
    plot: Option<PathBuf>,
    /// Print JSON (key figures and every curve) instead of tables.
    #[arg(long)]
    json: bool,
}

/// The tyre of `axle` as the model runs it (left wheel), and its static wheel load, N.
fn axle_setup(v: &Vehicle, axle: usize) -> (TyreSetup, f64) {
    let t = &v.tyres[axle];
    let setup = TyreSetup {
        model: t.model,
        camber: t.camber,
        friction: v.road.friction,
        method: t.combined_slip,
    };
    (
        setup,
        0.5 * yawdyn::model::static_axle_loads(&v.chassis)[axle],
    )
}

fn axle_name(axle: usize) -> &'static str {
    if axle == FRONT { "front" } else { "rear" }
}

fn method_name(m: CombinedSlip) -> &'static str {
    match m {
        CombinedSlip::FrictionEllipse => "friction_ellipse",
        CombinedSlip::MagicFormula => "magic_formula",
    }
}

/// One inspected axle.
struct Inspected {
    axle: usize,
    setup: TyreSetup,
    static_load: f64,
    report: Inspection,
}

/// Runs `yawdyn tyre`.
pub fn run(args: Args) -> anyhow::Result<Outcome> {
    let overrides = parse_overrides(&args.sets)?;
    let vehicle = load_vehicle(&args.vehicle, &overrides)?;
    let loads = args
        .loads_n
        .as_deref()
        .map(|t| parse_values("loads-n", t))
        .transpose()?;
    let angles: Vec<f64> = parse_values("slip-angles-deg", &args.slip_angles_deg)?
        .into_iter()
        .map(f64::to_radians)
        .collect();
    let axles: Vec<usize> = match args.axle {
        AxleChoice::Front => vec![FRONT],
        AxleChoice::Rear => vec![REAR],
        AxleChoice::Both => vec![FRONT, REAR],
    };
    check_tyre_outputs(&args, &axles)?;
    let started = Instant::now();
    let mut inspected = Vec::new();
    for &axle in &axles {
        let (setup, static_load) = axle_setup(&vehicle, axle);
        let mut settings = InspectSettings::around(static_load);
        if let Some(l) = &loads {
            settings.loads.clone_from(l);
        }
        settings.combined_slip_angles.clone_from(&angles);
        let report = inspect(&setup, &settings)?;
        inspected.push(Inspected {
            axle,
            setup,
            static_load,
            report,
        });
    }
    let elapsed = started.elapsed().as_secs_f64();
    for i in &inspected {
        if let Some(dir) = &args.out {
            write_csv(dir, i)?;
        }
        if let Some(dir) = &args.plot {
            write_plots(dir, &vehicle, i)?;
        }
    }
    if args.json {
        let out = json!({
            "vehicle": vehicle.name,
            "elapsed_s": elapsed,
            "axles": inspected.iter().map(axle_json).collect::<Vec<_>>(),
        });
        outln!("{}", serde_json::to_string_pretty(&out)?);
    } else {
        print_table(&vehicle, &inspected, elapsed);
    }
    Ok(Outcome::Success)
}

/// Key-figure rows: (quantity, unit, value of a LoadFigures).
type Row = (&'static str, &'static str, fn(&LoadFigures) -> f64);

const ROWS: [Row; 6] = [
    ("peak mu_x (driving)", "1", |f| f.peak_mu_x),
    ("slip ratio at peak mu_x", "1", |f| f.slip_ratio_at_peak),
    ("peak mu_y (left)", "1", |f| f.peak_mu_y),
    ("slip angle at peak mu_y", "deg", |f| {
        f.slip_angle_at_peak.to_degrees()
    }),
    ("slip stiffness", "N", |f| f.slip_stiffness),
    ("cornering stiffness", "N/deg", |f| {
        f.cornering_stiffness.to_radians()
    }),
];

fn print_table(v: &Vehicle, inspected: &[Inspected], elapsed: f64) {
    outln!("{}", v.name);
    outln!(
        "tyre inspection with the model's force function: the axle's camber (left wheel), road friction and combined-slip method"
    );
    outln!();
    let mut headers = vec!["quantity".to_string()];
    for i in inspected {
        let name = axle_name(i.axle);
        headers.push(format!("{name} at Fz0"));
        headers.push(format!("{name} at static load"));
    }
    headers.push("unit".to_string());
    let mut t = Table::new(headers);
    let mut load_row = vec!["wheel load".to_string()];
    let mut setup_row = vec!["camber / method".to_string()];
    for i in inspected {
        load_row.push(fmt_num(i.report.at_nominal_load.load, 5));
        load_row.push(fmt_num(i.static_load, 5));
        setup_row.push(format!("{:.2} deg", i.setup.camber.to_degrees()));
        setup_row.push(method_name(i.setup.method).to_string());
    }
    load_row.push("N".to_string());
    setup_row.push(String::new());
    t.row(load_row);
    for (quantity, unit, value) in ROWS {
        let mut row = vec![quantity.to_string()];
        for i in inspected {
            row.push(fmt_num(value(&i.report.at_nominal_load), 4));
            row.push(
                i.report
                    .at_reference_load
                    .as_ref()
                    .map_or("-".to_string(), |f| fmt_num(value(f), 4)),
            );
        }
        row.push(unit.to_string());
        t.row(row);
    }
    t.row(setup_row);
    out!("{}", t.render());
    outln!();
    outln!(
        "Peaks on the positive-slip side at zero other slip; stiffnesses are the slopes at zero slip. Computed in {:.3} s.",
        elapsed
    );
}

fn figures_json(f: &LoadFigures) -> Value {
    json!({"load_n": f.load, "peak_mu_x": f.peak_mu_x, "slip_ratio_at_peak": f.slip_ratio_at_peak,
           "peak_mu_y": f.peak_mu_y, "slip_angle_at_peak_deg": f.slip_angle_at_peak.to_degrees(),
           "slip_stiffness_n": f.slip_stiffness,
           "cornering_stiffness_n_per_deg": f.cornering_stiffness.to_radians()})
}

fn axle_json(i: &Inspected) -> Value {
    let r = &i.report;
    let curve = |c: &yawdyn::tyre::inspect::SlipCurve, angle: bool| {
        let slip: Vec<f64> = if angle {
            c.slip.iter().map(|a| a.to_degrees()).collect()
        } else {
            c.slip.clone()
        };
        json!({"load_n": c.load, "slip": slip, "force_n": c.force})
    };
    json!({
        "axle": axle_name(i.axle),
        "camber_deg": i.setup.camber.to_degrees(),
        "road_friction": i.setup.friction,
        "combined_slip": method_name(i.setup.method),
        "static_wheel_load_n": i.static_load,
        "at_nominal_load": figures_json(&r.at_nominal_load),
        "at_static_load": r.at_reference_load.as_ref().map(figures_json),
        "longitudinal": r.longitudinal.iter().map(|c| curve(c, false)).collect::<Vec<_>>(),
        "lateral_slip_angle_deg": r.lateral.iter().map(|c| curve(c, true)).collect::<Vec<_>>(),
        "combined": r.combined.iter().map(|c| json!({
            "method": method_name(c.method), "slip_angle_deg": c.slip_angle.to_degrees(),
            "load_n": c.load, "slip_ratio": c.slip_ratio, "fx_n": c.fx, "fy_n": c.fy})).collect::<Vec<_>>(),
        "load_dependence": r.load_dependence.iter().map(figures_json).collect::<Vec<_>>(),
    })
}

/// Names of the SVG plots of one axle (`tyre_<axle>_<name>.svg`).
const PLOTS: [&str; 5] = [
    "longitudinal",
    "lateral",
    "combined_friction_ellipse",
    "combined_magic_formula",
    "load",
];

/// Checks every file `yawdyn tyre` will write before any work, so that a
/// refused one (a FIFO, a device, the vehicle file, a link to one of them)
/// leaves the folders as they were: `--out` and `--plot` are directories
/// or new paths, and each file in them follows the output rules
/// ([`super::check_outputs`]).
fn check_tyre_outputs(args: &Args, axles: &[usize]) -> anyhow::Result<()> {
    yawdyn::output::note_input(&args.vehicle);
    let mut files = Vec::new();
    if let Some(dir) = &args.out {
        yawdyn::output::check_output_dir(dir)?;
        for &axle in axles {
            for stem in ["curves", "load"] {
                files.push(dir.join(format!("tyre_{}_{stem}.csv", axle_name(axle))));
            }
        }
    }
    if let Some(dir) = &args.plot {
        yawdyn::output::check_output_dir(dir)?;
        for &axle in axles {
            for stem in PLOTS {
                files.push(dir.join(format!("tyre_{}_{stem}.svg", axle_name(axle))));
            }
        }
    }
    let files: Vec<&Path> = files.iter().map(PathBuf::as_path).collect();
    super::check_outputs(&files)
}

/// `dir/tyre_<axle>_<stem>.<ext>`, creating `dir`.
fn output(dir: &Path, axle: usize, stem: &str, ext: &str) -> anyhow::Result<PathBuf> {
    std::fs::create_dir_all(dir).with_context(|| format!("creating {}", dir.display()))?;
    Ok(dir.join(format!("tyre_{}_{stem}.{ext}", axle_name(axle))))
}

/// Writes the CSV files of one axle into `dir`.
fn write_csv(dir: &Path, i: &Inspected) -> anyhow::Result<()> {
    let write = |path: PathBuf, text: String| -> anyhow::Result<()> {
        yawdyn::output::write_atomically(&path, |temp| {
            std::fs::write(temp, &text).with_context(|| format!("writing {}", path.display()))
        })
    };
    write(
        output(dir, i.axle, "curves", "csv")?,
        i.report.curves_csv(i.setup.method),
    )?;
    write(output(dir, i.axle, "load", "csv")?, i.report.load_csv())
}

/// Writes the SVG plots of one axle into `dir`.
fn write_plots(dir: &Path, v: &Vehicle, i: &Inspected) -> anyhow::Result<()> {
    let axle = axle_name(i.axle);
    let name = short_name(&v.name);
    let r = &i.report;
    let file = |stem: &str, ext: &str| output(dir, i.axle, stem, ext);
    let kn = |f: &[f64]| f.iter().map(|x| x / 1000.0).collect::<Vec<_>>();
    let per_load = |curves: &[yawdyn::tyre::inspect::SlipCurve], angle: bool| {
        curves
            .iter()
            .map(|c| {
                let x = if angle {
                    c.slip.iter().map(|a| a.to_degrees()).collect()
                } else {
                    c.slip.clone()
                };
                Series::new(
                    format!("Fz {} kN", fmt_num(c.load / 1000.0, 3)),
                    x,
                    kn(&c.force),
                )
            })
            .collect::<Vec<_>>()
    };
    lines(
        &file("longitudinal", "svg")?,
        &format!("{name}, {axle} tyre: Fx at zero slip angle"),
        &Axis::new("slip ratio [1]"),
        &Axis::new("longitudinal force Fx [kN]"),
        &per_load(&r.longitudinal, false),
    )?;
    lines(
        &file("lateral", "svg")?,
        &format!("{name}, {axle} tyre: Fy at zero slip ratio"),
        &Axis::new("slip angle [deg]"),
        &Axis::new("lateral force Fy [kN]"),
        &per_load(&r.lateral, true),
    )?;
    for method in [CombinedSlip::FrictionEllipse, CombinedSlip::MagicFormula] {
        let series: Vec<Series> = r
            .combined
            .iter()
            .filter(|c| c.method == method)
            .map(|c| {
                Series::new(
                    format!("slip angle {} deg", fmt_num(c.slip_angle.to_degrees(), 3)),
                    kn(&c.fx),
                    kn(&c.fy),
                )
            })
            .collect();
        let load = r.combined.first().map_or(0.0, |c| c.load);
        lines(
            &file(&format!("combined_{}", method_name(method)), "svg")?,
            &format!(
                "{axle} tyre, {}: Fy against Fx, Fz {} kN",
                method_name(method).replace('_', " "),
                fmt_num(load / 1000.0, 3)
            ),
            &Axis::new("longitudinal force Fx [kN]"),
            &Axis::new("lateral force Fy [kN]"),
            &series,
        )?;
    }
    let loads: Vec<f64> = r.load_dependence.iter().map(|f| f.load / 1000.0).collect();
    let column = |f: fn(&LoadFigures) -> f64| r.load_dependence.iter().map(f).collect::<Vec<_>>();
    let panels = vec![
        (
            Axis::new("peak friction [1]"),
            vec![
                Series::new("mu_x", loads.clone(), column(|f| f.peak_mu_x)),
                Series::new("mu_y", loads.clone(), column(|f| f.peak_mu_y)),
            ],
        ),
        (
            Axis::new("cornering stiffness [kN/deg]"),
            vec![Series::new(
                "dFy/dalpha",
                loads.clone(),
                column(|f| f.cornering_stiffness.to_radians() / 1000.0),
            )],
        ),
        (
            Axis::new("slip stiffness [kN]"),
            vec![Series::new(
                "dFx/dkappa",
                loads.clone(),
                column(|f| f.slip_stiffness / 1000.0),
            )],
        ),
    ];
    stacked(
        &file("load", "svg")?,
        &format!("{name}, {axle} tyre: peak friction and stiffness against load"),
        &Axis::new("wheel load [kN]"),
        &panels,
    )?;
    Ok(())
}
