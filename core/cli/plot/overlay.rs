//! Overlays: several results files and sweep cases on one time-history or
//! cross-plot, one line per file or case.

use super::*;

/// One overlaid run: a results file or one case of a sweep.
pub(super) struct Source {
    /// Legend text: the file stem, or the case's varied overrides.
    pub(super) label: String,
    /// Its samples (a sweep case becomes a record of its channels).
    pub(super) record: RunRecord,
}

/// Several results files and/or sweep cases overlaid as time histories or a
/// cross-plot, one line per file or case.
pub(super) fn overlay_plot(args: &Args, out: &Path) -> anyhow::Result<Drawn> {
    let kind = match args.kind {
        Kind::Auto if args.x.is_some() => Kind::Xy,
        Kind::Auto => Kind::Time,
        k @ (Kind::Time | Kind::Xy) => k,
        k => {
            return Err(bad_input(format!(
                "--kind {} draws one file; overlays of several files or --case are drawn as \
                 time histories (--kind time) or a cross-plot (--kind xy with --x)",
                k.name()
            )));
        }
    };
    let several_files = args.files.len() > 1;
    let mut sources = Vec::new();
    let mut cases = Vec::new();
    let mut sweeps_seen = 0;
    // (source, case index, varied overrides) of every sweep case.
    let mut case_overrides: Vec<(usize, usize, Vec<String>)> = Vec::new();
    for file in &args.files {
        let format = file_format(file)?;
        match format.as_str() {
            FORMAT_NAME => sources.push(Source {
                label: file_label(file),
                record: read_hdf5(file)?,
            }),
            SWEEP_FORMAT => {
                sweeps_seen += 1;
                if args.case.is_empty() {
                    return Err(bad_input(format!(
                        "{} is a sweep file: choose its cases to overlay with --case (e.g. --case 0,5)",
                        file.display()
                    )));
                }
                let sweep = yawdyn::sweep::read_sweep(file)?;
                for &index in &args.case {
                    if sweep.summary.row_of(index).is_none() {
                        return Err(bad_input(format!(
                            "--case {index}: {} holds cases {}",
                            file.display(),
                            case_range(&sweep)
                        )));
                    }
                    let case = sweep.read_case(index)?;
                    if case.channels.is_empty() {
                        return Err(bad_input(format!(
                            "--case {index}: the case did not run ({}: {})",
                            case.status.name(),
                            case.message
                        )));
                    }
                    let varied: Vec<String> = sweep
                        .spec
                        .grid
                        .overrides(index)
                        .iter()
                        .map(|o| o.to_text())
                        .collect();
                    let label = if several_files {
                        format!("{}: case {index}, {}", file_label(file), varied.join(", "))
                    } else {
                        format!("case {index}: {}", varied.join(", "))
                    };
                    cases.push(index);
                    case_overrides.push((sources.len(), index, varied));
                    sources.push(Source {
                        label,
                        record: RunRecord {
                            time: case.time,
                            channels: case.channels,
                            provenance: Provenance {
                                script_path: sweep.spec.script_path.clone(),
                                vehicle_path: sweep_vehicle(&sweep.spec),
                                overrides: sweep
                                    .spec
                                    .base_overrides
                                    .iter()
                                    .map(|o| o.to_text())
                                    .collect(),
                                ..Provenance::default()
                            },
                            status: RunStatus::Completed,
                            metrics: case.metrics,
                            criteria: Vec::new(),
                        },
                    });
                }
            }
            MAP_FORMAT => {
                return Err(bad_input(format!(
                    "{} is a stability map: maps are plotted one at a time",
                    file.display()
                )));
            }
            other => {
                return Err(bad_input(format!(
                    "{}: not a yawdyn file this command can plot (format {other:?})",
                    file.display()
                )));
            }
        }
    }
    if !args.case.is_empty() && sweeps_seen == 0 {
        return Err(bad_input(
            "--case picks cases of a sweep file; no sweep file was given",
        ));
    }
    // Cases of one sweep: the overrides they share go to the title, the
    // legend keeps what tells them apart.
    let mut shared: Vec<String> = Vec::new();
    if !several_files && case_overrides.len() > 1 {
        shared = case_overrides[0]
            .2
            .iter()
            .filter(|o| case_overrides.iter().all(|(_, _, v)| v.contains(o)))
            .cloned()
            .collect();
        for (source, index, varied) in &case_overrides {
            let own: Vec<&str> = varied
                .iter()
                .filter(|o| !shared.contains(o))
                .map(String::as_str)
                .collect();
            sources[*source].label = if own.is_empty() {
                format!("case {index}")
            } else {
                format!("case {index}: {}", own.join(", "))
            };
        }
    }
    let mut title = overlay_title(&sources);
    for o in &shared {
        title.push_str(&format!(", {o}"));
    }
    let mut drawn = histories(args, &sources, &title, out, kind)?;
    drawn.cases = cases;
    Ok(drawn)
}

/// "0 to N-1" or the file's case indices when it is a shard.
fn case_range(sweep: &yawdyn::sweep::SweepFile) -> String {
    let indices = &sweep.summary.case_index;
    match (indices.first(), indices.last()) {
        (Some(a), Some(b)) => format!("{a} to {b}"),
        _ => "none".into(),
    }
}

/// Title of an overlay: what the runs share (script, vehicle, common
/// overrides), the differences being in the legend.
fn overlay_title(sources: &[Source]) -> String {
    let mut scripts: Vec<String> = Vec::new();
    let mut vehicles: Vec<String> = Vec::new();
    for s in sources {
        let script = stem_of(&s.record.provenance.script_path);
        if !script.is_empty() && !scripts.contains(&script) {
            scripts.push(script);
        }
        let vehicle = vehicle_name(&s.record);
        if !vehicle.is_empty() && !vehicles.contains(&vehicle) {
            vehicles.push(vehicle);
        }
    }
    let mut title = format!("Comparison of {} runs", sources.len());
    if !scripts.is_empty() {
        title.push_str(&format!(": {}", scripts.join(", ")));
    }
    if !vehicles.is_empty() {
        title.push_str(&format!("; {}", vehicles.join(", ")));
    }
    let common: Vec<&String> = sources[0]
        .record
        .provenance
        .overrides
        .iter()
        .filter(|o| {
            sources
                .iter()
                .all(|s| s.record.provenance.overrides.contains(o))
        })
        .collect();
    for o in common {
        title.push_str(&format!(", {o}"));
    }
    title
}
