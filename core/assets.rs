//! Shipped manoeuvre scripts and demo vehicles, found wherever the binary runs.
//!
//! The files under `scripts/` (`*.rhai`) and `scripts/vehicles/` (`*.toml`)
//! are compiled into the binary. A command-line argument naming a script or
//! a vehicle resolves by one rule:
//!
//! 1. **A path that exists wins**, as given (relative to the current folder).
//! 2. Otherwise **a shipped name resolves to the shipped copy**. A shipped
//!    script is named by its path in the project (`scripts/step_steer.rhai`),
//!    its file name (`step_steer.rhai`) or its stem (`step_steer`); a shipped
//!    vehicle likewise (`scripts/vehicles/track_car.toml`,
//!    `vehicles/track_car.toml`, `track_car.toml`, `track_car`).
//! 3. Anything else is returned unchanged, so the caller reports the missing
//!    file as it always does.
//!
//! The shipped copies are written once, with their `scripts/` layout, into a
//! folder of the user's cache named after this build's version and a digest
//! of the shipped files (`$XDG_CACHE_HOME/yawdyn`, else `~/.cache/yawdyn`;
//! `~/Library/Caches/yawdyn` on macOS; the system temporary folder when there
//! is no home). A shipped script therefore finds the vehicle it names
//! (`vehicle("vehicles/hybrid_crossover.toml")`) beside it, as in the
//! project. The folder is filled under a temporary name and renamed, so
//! concurrent first runs (array jobs on a cluster) never see half a copy.
//!
//! This module only finds files; it reads no vehicle and runs no script. The
//! command line calls it at its edge (script and vehicle arguments).

use std::path::{Path, PathBuf};

use crate::error::{Classify, ErrorKind};

include!(concat!(env!("OUT_DIR"), "/shipped.rs"));

/// What an argument names.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AssetKind {
    /// A manoeuvre script, `scripts/<name>.rhai`.
    Script,
    /// A vehicle file, `scripts/vehicles/<name>.toml`.
    Vehicle,
}

impl AssetKind {
    /// Folder of this kind in the project, relative to its root.
    fn folder(self) -> &'static str {
        match self {
            Self::Script => "scripts",
            Self::Vehicle => "scripts/vehicles",
        }
    }
}

/// A file shipped inside the binary.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shipped {
    /// Path relative to the project root, e.g. `scripts/step_steer.rhai`.
    pub path: &'static str,
    /// The file's text.
    pub text: &'static str,
}

/// The shipped copies could not be written to disk.
#[derive(Debug, thiserror::Error)]
#[error("cannot unpack the shipped scripts and vehicles into {dir}")]
pub struct AssetError {
    /// The folder that could not be written.
    pub dir: PathBuf,
    /// Why.
    #[source]
    pub source: std::io::Error,
}

impl Classify for AssetError {
    fn kind(&self) -> ErrorKind {
        ErrorKind::Environment
    }
}

/// Every shipped script and vehicle, sorted by path.
pub fn shipped() -> impl Iterator<Item = Shipped> {
    SHIPPED.iter().map(|&(path, text)| Shipped { path, text })
}

/// The shipped file of `kind` that `name` names, if any (rule 2 above).
///
/// ```
/// use yawdyn::assets::{AssetKind, find};
/// let by_stem = find(AssetKind::Script, "step_steer").unwrap();
/// assert_eq!(by_stem.path, "scripts/step_steer.rhai");
/// assert_eq!(find(AssetKind::Vehicle, "vehicles/track_car.toml").unwrap().path,
///            "scripts/vehicles/track_car.toml");
/// assert!(find(AssetKind::Vehicle, "step_steer").is_none());
/// ```
pub fn find(kind: AssetKind, name: &str) -> Option<Shipped> {
    let name = name.replace('\\', "/");
    let name = name.trim_start_matches("./");
    shipped().find(|s| {
        let Some(file) = s
            .path
            .strip_prefix(kind.folder())
            .and_then(|f| f.strip_prefix('/'))
        else {
            return false;
        };
        // A file directly in the kind's folder (scripts/vehicles/x.toml is not a script).
        if file.contains('/') {
            return false;
        }
        let stem = file.rsplit_once('.').map_or(file, |(stem, _)| stem);
        name == s.path || s.path.ends_with(&format!("/{name}")) || name == stem
    })
}

/// Resolves a script argument by the module's rule; unpacks the shipped
/// copies when a shipped name is used.
pub fn resolve_script(arg: &Path) -> Result<PathBuf, AssetError> {
    resolve(AssetKind::Script, arg)
}

/// Resolves a vehicle argument by the module's rule; unpacks the shipped
/// copies when a shipped name is used.
pub fn resolve_vehicle(arg: &Path) -> Result<PathBuf, AssetError> {
    resolve(AssetKind::Vehicle, arg)
}

/// Rule 1, then rule 2, then the argument unchanged.
pub fn resolve(kind: AssetKind, arg: &Path) -> Result<PathBuf, AssetError> {
    if arg.exists() {
        return Ok(arg.to_path_buf());
    }
    match arg.to_str().and_then(|name| find(kind, name)) {
        Some(shipped) => Ok(unpacked_dir()?.join(shipped.path)),
        None => Ok(arg.to_path_buf()),
    }
}

/// The folder holding this build's shipped copies, written on first use.
pub fn unpacked_dir() -> Result<PathBuf, AssetError> {
    let dir = cache_root().join(format!(
        "shipped-{}-{SHIPPED_DIGEST:016x}",
        env!("CARGO_PKG_VERSION")
    ));
    if dir.join(COMPLETE_MARK).is_file() {
        return Ok(dir);
    }
    unpack_into(&dir).map_err(|source| AssetError {
        dir: dir.clone(),
        source,
    })?;
    Ok(dir)
}

/// File written last into a complete copy.
const COMPLETE_MARK: &str = ".complete";

/// Writes every shipped file under a temporary sibling of `dir`, then renames
/// it to `dir`. Losing the rename to another process is fine: its copy is the
/// same (same digest).
fn unpack_into(dir: &Path) -> std::io::Result<()> {
    let parent = dir.parent().unwrap_or(Path::new("."));
    std::fs::create_dir_all(parent)?;
    let staging = tempfile::Builder::new()
        .prefix(".shipped-")
        .tempdir_in(parent)?;
    for s in shipped() {
        let path = staging.path().join(s.path);
        if let Some(folder) = path.parent() {
            std::fs::create_dir_all(folder)?;
        }
        std::fs::write(&path, s.text)?;
    }
    std::fs::write(staging.path().join(COMPLETE_MARK), "")?;
    let staging = staging.keep();
    match std::fs::rename(&staging, dir) {
        Ok(()) => Ok(()),
        Err(_) if dir.join(COMPLETE_MARK).is_file() => {
            std::fs::remove_dir_all(&staging).ok();
            Ok(())
        }
        Err(e) => {
            std::fs::remove_dir_all(&staging).ok();
            Err(e)
        }
    }
}

/// `yawdyn` folder in the user's cache (see the module doc).
fn cache_root() -> PathBuf {
    let env_dir = |key: &str| {
        std::env::var_os(key)
            .map(PathBuf::from)
            .filter(|p| p.is_absolute())
    };
    let base = env_dir("XDG_CACHE_HOME")
        .or_else(|| {
            let home = env_dir("HOME")?;
            Some(if cfg!(target_os = "macos") {
                home.join("Library/Caches")
            } else {
                home.join(".cache")
            })
        })
        .unwrap_or_else(std::env::temp_dir);
    base.join("yawdyn")
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The demo vehicles and the torque-split script are shipped, and each
    /// shipped script's own `vehicle("...")` names a shipped vehicle.
    #[test]
    fn shipped_scripts_name_shipped_vehicles() {
        assert!(find(AssetKind::Script, "power_on_exit").is_some());
        assert!(find(AssetKind::Vehicle, "hybrid_crossover").is_some());
        let mut scripts = 0;
        for s in shipped().filter(|s| s.path.ends_with(".rhai")) {
            scripts += 1;
            for line in s.text.lines() {
                let Some(rest) = line.trim_start().strip_prefix("vehicle(\"") else {
                    continue;
                };
                let file = rest.split('"').next().unwrap_or_default();
                let path = format!("scripts/{file}");
                assert!(
                    shipped().any(|v| v.path == path),
                    "{} names {path}, which is not shipped",
                    s.path
                );
            }
        }
        assert!(scripts >= 5, "only {scripts} scripts shipped");
    }

    /// Rule 1: an existing path wins over a shipped name, even when it is
    /// spelled like one.
    #[test]
    fn an_existing_path_wins() {
        let dir = tempfile::tempdir().unwrap();
        let own = dir.path().join("step_steer.rhai");
        std::fs::write(&own, "// mine").unwrap();
        assert_eq!(resolve_script(&own).unwrap(), own);
    }

    /// Rule 3: an unknown name comes back unchanged, for the caller to report.
    #[test]
    fn an_unknown_name_is_returned_unchanged() {
        let name = Path::new("no_such_manoeuvre_here.rhai");
        assert_eq!(resolve_script(name).unwrap(), name);
        assert!(find(AssetKind::Script, "hybrid_crossover").is_none());
        assert!(find(AssetKind::Script, "vehicles/hybrid_crossover.toml").is_none());
    }
}
