//! Build facts for `yawdyn --version` and results provenance, and the list of
//! shipped scripts and demo vehicles that `core/assets.rs` embeds.
//!
//! Environment set for the crate:
//! - `YAWDYN_GIT_REVISION`: `git describe --always --dirty`, or "unknown revision".
//! - `YAWDYN_BUILD_DATE`: UTC date of this build (`SOURCE_DATE_EPOCH` when set,
//!   for reproducible builds), `YYYY-MM-DD`.
//! - `YAWDYN_TARGET`: the target triple.
//!
//! File `$OUT_DIR/shipped.rs`: one `(relative path, include_str!(...))` entry
//! per `scripts/*.rhai` and `scripts/vehicles/*.toml`, and a digest of them all.
//!
//! `cfg(hdf5_info2)`, `cfg(hdf5_chunk_info)`, `cfg(hdf5_tokens)`: what the linked
//! HDF5 offers (`core/results/h5/header.rs` asks it where objects are stored).
use std::path::{Path, PathBuf};
use std::process::Command;

fn main() {
    let manifest = PathBuf::from(std::env::var("CARGO_MANIFEST_DIR").expect("set by cargo"));
    println!("cargo:rustc-env=YAWDYN_GIT_REVISION={}", git_revision());
    for path in git_paths() {
        println!("cargo:rerun-if-changed={}", path.display());
    }
    println!("cargo:rustc-env=YAWDYN_BUILD_DATE={}", build_date());
    println!("cargo:rerun-if-env-changed=SOURCE_DATE_EPOCH");
    let target = std::env::var("TARGET").unwrap_or_else(|_| "unknown target".into());
    println!("cargo:rustc-env=YAWDYN_TARGET={target}");
    write_shipped(&manifest);
    hdf5_version_cfg();
}

/// Configuration flags for the version of the linked HDF5, which the HDF5
/// binding reports as `DEP_HDF5_VERSION_<major>_<minor>_<micro>` for every
/// release up to it: `hdf5_info2` from 1.10.3 (`H5Oget_info2`),
/// `hdf5_chunk_info` from 1.10.5 (`H5Dget_chunk_info`), `hdf5_tokens` from
/// 1.12 (object information gives a token instead of a header address).
fn hdf5_version_cfg() {
    for (flag, version) in [
        ("hdf5_info2", "1_10_3"),
        ("hdf5_chunk_info", "1_10_5"),
        ("hdf5_tokens", "1_12_0"),
    ] {
        println!("cargo::rustc-check-cfg=cfg({flag})");
        println!("cargo:rerun-if-env-changed=DEP_HDF5_VERSION_{version}");
        if std::env::var_os(format!("DEP_HDF5_VERSION_{version}")).is_some() {
            println!("cargo:rustc-cfg={flag}");
        }
    }
}

/// `git describe --always --dirty --exclude '*'`: the short commit hash, with
/// `-dirty` when the work tree has changes.
fn git_revision() -> String {
    git(&["describe", "--always", "--dirty", "--exclude", "*"])
        .unwrap_or_else(|| "unknown revision".to_string())
}

/// Files whose change means a new revision: HEAD, the index and the branch ref
/// (found through git, so linked work trees work too).
fn git_paths() -> Vec<PathBuf> {
    let mut paths = Vec::new();
    for name in ["HEAD", "index", "packed-refs"] {
        if let Some(p) = git(&["rev-parse", "--git-path", name]) {
            paths.push(PathBuf::from(p));
        }
    }
    let branch = git(&["symbolic-ref", "-q", "HEAD"]);
    if let Some(p) = branch.and_then(|b| git(&["rev-parse", "--git-path", &b])) {
        paths.push(PathBuf::from(p));
    }
    paths.retain(|p| p.exists());
    paths
}

/// Output of a git command, trimmed, when it succeeds and prints something.
fn git(args: &[&str]) -> Option<String> {
    Command::new("git")
        .args(args)
        .output()
        .ok()
        .filter(|o| o.status.success())
        .and_then(|o| String::from_utf8(o.stdout).ok())
        .map(|s| s.trim().to_string())
        .filter(|s| !s.is_empty())
}

/// UTC date `YYYY-MM-DD` of `SOURCE_DATE_EPOCH`, or of now.
fn build_date() -> String {
    let seconds = std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|s| s.trim().parse::<i64>().ok())
        .unwrap_or_else(|| {
            std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map(|d| d.as_secs() as i64)
                .unwrap_or(0)
        });
    let (y, m, d) = civil_from_days(seconds.div_euclid(86_400));
    format!("{y:04}-{m:02}-{d:02}")
}

/// Civil date of a count of days since 1970-01-01 (proleptic Gregorian).
/// Algorithm "civil_from_days" from H. Hinnant, *chrono-Compatible Low-Level
/// Date Algorithms* (2013), written here from its description.
fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let day = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let month = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    (yoe + era * 400 + i64::from(month <= 2), month, day)
}

/// Writes `$OUT_DIR/shipped.rs`: the shipped scripts and vehicles, sorted by
/// path, and an FNV-1a digest of their paths and contents.
fn write_shipped(manifest: &Path) {
    let mut files = Vec::new();
    for (dir, ext) in [("scripts", "rhai"), ("scripts/vehicles", "toml")] {
        println!("cargo:rerun-if-changed={dir}");
        let Ok(entries) = std::fs::read_dir(manifest.join(dir)) else {
            continue;
        };
        for entry in entries.flatten() {
            let path = entry.path();
            if path.is_file() && path.extension().is_some_and(|e| e == ext) {
                let name = path.file_name().expect("a file").to_string_lossy();
                files.push(format!("{dir}/{name}"));
            }
        }
    }
    files.sort();
    // FNV-1a, 64 bit (Fowler, Noll, Vo; parameters from the authors' published description).
    let mut digest: u64 = 0xcbf2_9ce4_8422_2325;
    let mut code = String::from("/// Shipped files: path relative to the project root, text.\n");
    code.push_str("pub(crate) static SHIPPED: &[(&str, &str)] = &[\n");
    for rel in &files {
        let text = std::fs::read(manifest.join(rel)).expect("readable shipped file");
        for byte in rel.bytes().chain([0]).chain(text.iter().copied()) {
            digest = (digest ^ u64::from(byte)).wrapping_mul(0x0100_0000_01b3);
        }
        code.push_str(&format!(
            "    ({rel:?}, include_str!(concat!(env!(\"CARGO_MANIFEST_DIR\"), \"/{rel}\"))),\n"
        ));
    }
    code.push_str("];\n");
    code.push_str(&format!(
        "/// FNV-1a digest of the shipped paths and texts.\npub(crate) const SHIPPED_DIGEST: u64 = {digest:#018x};\n"
    ));
    let out = PathBuf::from(std::env::var("OUT_DIR").expect("set by cargo")).join("shipped.rs");
    std::fs::write(out, code).expect("OUT_DIR is writable");
}
