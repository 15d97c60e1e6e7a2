//! What a sensitivity ranking prints and draws: aligned tables, JSON and the
//! bar chart.

use super::*;

/// Rows shown per metric (`--top`, 0 = all).
pub(super) fn shown(config: &Config, total: usize) -> usize {
    if config.top == 0 {
        total
    } else {
        config.top.min(total)
    }
}

/// A metric's heading: name, unit and base value.
pub(super) fn heading(r: &Ranking) -> String {
    let unit = if r.unit.is_empty() {
        String::new()
    } else {
        format!(" {}", r.unit)
    };
    format!("{} = {}{unit}", r.metric, fmt_num(r.base, 5))
}

/// Writes the bar chart: one panel per metric, `--top` rows each.
pub(super) fn draw(
    path: &Path,
    config: &Config,
    plan: &Plan,
    rankings: &[Ranking],
) -> anyhow::Result<()> {
    let panels: Vec<SensitivityPanel> = rankings
        .iter()
        .map(|r| {
            let ranked = r.ranked();
            let bars = ranked[..shown(config, ranked.len())]
                .iter()
                .map(|e| SensitivityBar {
                    label: e.parameter.clone(),
                    up: e.elasticity_up,
                    down: e.elasticity_down,
                    central: e.elasticity,
                })
                .collect();
            SensitivityPanel {
                title: heading(r),
                bars,
            }
        })
        .collect();
    let title = format!(
        "Sensitivity ranking, relative step {} %",
        fmt_num(plan.step * 100.0, 3)
    );
    // The plot writer does not create directories; the HDF5 writer does.
    if let Some(dir) = path.parent().filter(|d| !d.as_os_str().is_empty()) {
        std::fs::create_dir_all(dir)
            .with_context(|| format!("cannot create the directory {}", dir.display()))?;
    }
    sensitivity_bars(path, &title, &panels)?;
    Ok(())
}

/// Prints the JSON document (estimates in rank order, all of them).
pub(super) fn print_json(
    config: &Config,
    plan: &Plan,
    rankings: &[Ranking],
    failed_cases: usize,
) -> anyhow::Result<()> {
    let point = match &config.source {
        Source::Quantities { point, .. } => point.map(|p| PointJson {
            speed_kph: p.speed * 3.6,
            lat_accel_g: p.lat_accel / GRAVITY,
        }),
        Source::Script { .. } => None,
    };
    let report = Report {
        step: plan.step,
        script: match &config.source {
            Source::Script { path, .. } => Some(path.display().to_string()),
            Source::Quantities { .. } => None,
        },
        vehicle: config.vehicle.as_ref().map(|v| v.display().to_string()),
        overrides: plan.base_overrides.iter().map(Override::to_text).collect(),
        operating_point: point,
        parameters: plan.parameters.len(),
        cases: plan.len(),
        failed_cases,
        rankings: rankings
            .iter()
            .map(|r| RankingJson {
                metric: &r.metric,
                unit: &r.unit,
                base: r.base,
                estimates: r.ranked(),
                failures: &r.failures,
            })
            .collect(),
        skipped: &plan.skipped,
    };
    outln!("{}", serde_json::to_string_pretty(&report)?);
    Ok(())
}

/// Characters of a failure message printed in the table (the JSON and the
/// HDF5 file keep it whole).
const MAX_MESSAGE: usize = 100;

/// `message` cut to [`MAX_MESSAGE`] characters.
pub(super) fn shorten(message: &str) -> String {
    if message.chars().count() > MAX_MESSAGE {
        let cut: String = message.chars().take(MAX_MESSAGE - 1).collect();
        format!("{cut}…")
    } else {
        message.to_string()
    }
}

/// Prints one ranked table per metric, the failed perturbations and the
/// skipped parameters.
pub(super) fn print_tables(
    config: &Config,
    plan: &Plan,
    rankings: &[Ranking],
    failed_cases: usize,
) {
    let n = |v: f64| {
        if v.is_finite() {
            fmt_num(v, 4)
        } else {
            "-".to_string()
        }
    };
    for (k, r) in rankings.iter().enumerate() {
        if k > 0 {
            outln!();
        }
        outln!("{}", heading(r));
        let mut table = Table::new([
            "rank",
            "parameter",
            "value",
            "elasticity",
            "up",
            "down",
            "asymmetry",
        ]);
        let ranked = r.ranked();
        for e in &ranked[..shown(config, ranked.len())] {
            table.row([
                e.rank.map_or_else(|| "-".to_string(), |k| k.to_string()),
                e.parameter.clone(),
                n(e.value),
                n(e.elasticity),
                n(e.elasticity_up),
                n(e.elasticity_down),
                n(e.asymmetry),
            ]);
        }
        out!("{}", table.render());
        if ranked.len() > shown(config, ranked.len()) {
            outln!(
                "... {} more parameters not shown (--top 0 shows all)",
                ranked.len() - shown(config, ranked.len())
            );
        }
        if !r.failures.is_empty() {
            outln!("failed perturbations ({}):", r.failures.len());
            let mut failures = Table::new(["parameter", "step", "value", "why"]);
            for f in &r.failures {
                failures.row([
                    f.parameter.clone(),
                    f.direction.name().to_string(),
                    n(f.value),
                    shorten(&f.message),
                ]);
            }
            out!("{}", failures.render());
        }
    }
    outln!();
    outln!(
        "elasticity = (dm/m)/(dp/p): central difference of the steps p*(1+h) and p*(1-h), h = {}; up/down: one-sided; asymmetry = (up - down)/(|up| + |down|)",
        fmt_num(plan.step, 4)
    );
    if !plan.skipped.is_empty() {
        let keys: Vec<&str> = plan.skipped.iter().map(|s| s.key.as_str()).collect();
        outln!(
            "skipped ({}, zero or integer values): {}",
            keys.len(),
            keys.join(", ")
        );
    }
    outln!(
        "parameters: {}, perturbed cases: {}, failed: {}",
        plan.parameters.len(),
        plan.len(),
        failed_cases
    );
}
