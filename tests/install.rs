//! Installation and set-up: the README's first command (`sh setup.sh`) on a
//! machine without HDF5, shipped scripts and vehicles found from any folder,
//! the long `--version`, completions and the manual page.

use std::path::Path;
use std::process::{Command, Output};

fn repo(relative: &str) -> std::path::PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join(relative)
}

fn text(o: &Output) -> String {
    format!(
        "status {:?}\n--- stdout\n{}\n--- stderr\n{}",
        o.status.code(),
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

/// `yawdyn ARGS` in `dir`, with the shipped copies unpacked under `dir`.
fn yawdyn_in(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_yawdyn"))
        .args(args)
        .current_dir(dir)
        .env("XDG_CACHE_HOME", dir.join("cache"))
        .output()
        .expect("run yawdyn")
}

/// `sh setup.sh deps` on a machine without HDF5 that may not install
/// packages nor build HDF5 (simulated: the shared test machine has HDF5 and
/// cannot uninstall it): one paragraph naming the install command of each
/// family, exit 1, and no build started (so no build-script panic).
#[test]
fn setup_without_hdf5_names_the_install_command_for_each_system() {
    let o = Command::new("sh")
        .arg(repo("setup.sh"))
        .arg("deps")
        .env("YAWDYN_NO_INSTALL", "1")
        .env("YAWDYN_SETUP_PRETEND_MISSING", "hdf5 cmake")
        .output()
        .expect("run sh setup.sh");
    assert_eq!(o.status.code(), Some(1), "{}", text(&o));
    let err = String::from_utf8_lossy(&o.stderr);
    for command in [
        "sudo apt-get install libhdf5-dev",
        "sudo dnf install hdf5-devel",
        "brew install hdf5",
    ] {
        assert!(err.contains(command), "no `{command}` in:\n{err}");
    }
    assert!(!err.contains("panicked"), "{err}");
    // One paragraph: the message is a single line between blank lines.
    let paragraph = err
        .split("\n\n")
        .find(|p| p.contains("libhdf5-dev"))
        .expect("the message");
    assert_eq!(paragraph.trim().lines().count(), 1, "{paragraph}");
}

/// Where it may install (root; here a stand-in `apt-get` and `id` first on
/// PATH, so the test machine is not touched), a missing HDF5 is installed with
/// the distribution's package manager before anything else is tried.
#[test]
fn setup_installs_hdf5_with_the_package_manager_when_it_may() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let bin = dir.path().join("bin");
    std::fs::create_dir(&bin).unwrap();
    let log = dir.path().join("apt.log");
    let stubs = [
        ("id", "#!/bin/sh\necho 0\n".to_string()),
        (
            "apt-get",
            format!("#!/bin/sh\necho \"$*\" >> '{}'\n", log.display()),
        ),
    ];
    for (name, body) in stubs {
        let path = bin.join(name);
        std::fs::write(&path, body).unwrap();
        std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o755)).unwrap();
    }
    let path = format!("{}:{}", bin.display(), std::env::var("PATH").unwrap());
    let o = Command::new("sh")
        .arg(repo("setup.sh"))
        .arg("deps")
        .env("PATH", path)
        .env("YAWDYN_SETUP_PRETEND_MISSING", "hdf5 cmake")
        .output()
        .expect("run sh setup.sh");
    // The stand-in installs nothing, so the check after it still fails.
    assert_eq!(o.status.code(), Some(1), "{}", text(&o));
    let calls = std::fs::read_to_string(&log).unwrap_or_default();
    assert!(calls.contains("update"), "no apt-get update:\n{calls}");
    assert!(
        calls.contains("install -y -qq libhdf5-dev pkg-config"),
        "HDF5 not installed with apt-get:\n{calls}\n{}",
        text(&o)
    );
}

/// Missing Rust toolchain: the same kind of message, naming rustup and the packages.
#[test]
fn setup_without_cargo_names_how_to_get_it() {
    let o = Command::new("sh")
        .arg(repo("setup.sh"))
        .arg("deps")
        .env("YAWDYN_NO_INSTALL", "1")
        .env("YAWDYN_SETUP_PRETEND_MISSING", "cargo")
        .output()
        .expect("run sh setup.sh");
    assert_eq!(o.status.code(), Some(1), "{}", text(&o));
    let err = String::from_utf8_lossy(&o.stderr);
    for needle in [
        "rustup",
        "apt-get install cargo",
        "dnf install cargo",
        "brew install rust",
    ] {
        assert!(err.contains(needle), "no `{needle}` in:\n{err}");
    }
}

/// An unknown action is a usage error (exit 2), not a build.
#[test]
fn setup_rejects_an_unknown_action() {
    let o = Command::new("sh")
        .arg(repo("setup.sh"))
        .arg("no-such-action")
        .output()
        .expect("run sh setup.sh");
    assert_eq!(o.status.code(), Some(2), "{}", text(&o));
}

/// From a folder that is not the project: `bench` with its default vehicle,
/// `vehicle` and `stability` by demo-vehicle name, and `run` of a shipped
/// script by name, whose own `vehicle("vehicles/...")` is found too.
#[test]
fn shipped_scripts_and_vehicles_are_found_from_any_folder() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let o = yawdyn_in(d, &["bench", "--json"]);
    assert_eq!(o.status.code(), Some(0), "bench: {}", text(&o));
    let o = yawdyn_in(d, &["vehicle", "track_car", "--json"]);
    assert_eq!(o.status.code(), Some(0), "vehicle: {}", text(&o));
    assert!(String::from_utf8_lossy(&o.stdout).contains("track car"));
    let o = yawdyn_in(
        d,
        &[
            "stability",
            "scripts/vehicles/hybrid_crossover.toml",
            "--speed-kph",
            "80",
            "--lat-accel-g",
            "0.3",
            "--json",
        ],
    );
    assert_eq!(o.status.code(), Some(0), "stability: {}", text(&o));
    let o = yawdyn_in(d, &["run", "step_steer", "--quiet", "--out", "step.h5"]);
    assert_eq!(o.status.code(), Some(0), "run: {}", text(&o));
    assert!(d.join("step.h5").is_file());
    // The project's own file, named by path, is what ran from the project root
    // before; the shipped copy is the same text.
    let shipped = std::fs::read_dir(d.join("cache/yawdyn"))
        .unwrap()
        .flatten()
        .find(|e| e.file_name().to_string_lossy().starts_with("shipped-"))
        .expect("unpacked copies");
    let copy = std::fs::read_to_string(shipped.path().join("scripts/step_steer.rhai")).unwrap();
    assert_eq!(
        copy,
        std::fs::read_to_string(repo("scripts/step_steer.rhai")).unwrap()
    );
}

/// A file in the current folder wins over a shipped name spelled the same
/// (a vehicle file must end in `.toml`).
#[test]
fn a_local_file_wins_over_the_shipped_copy() {
    let dir = tempfile::tempdir().unwrap();
    let own = std::fs::read_to_string(repo("scripts/vehicles/track_car.toml"))
        .unwrap()
        .replacen("name = \"", "name = \"LOCAL COPY ", 1);
    std::fs::write(dir.path().join("track_car.toml"), own).unwrap();
    let o = yawdyn_in(dir.path(), &["vehicle", "track_car.toml"]);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    assert!(
        String::from_utf8_lossy(&o.stdout).contains("LOCAL COPY"),
        "{}",
        text(&o)
    );
}

/// `--version` names version, commit, build date, target and HDF5 version.
#[test]
fn long_version_names_the_build() {
    let dir = tempfile::tempdir().unwrap();
    let o = yawdyn_in(dir.path(), &["--version"]);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let out = String::from_utf8_lossy(&o.stdout);
    assert!(
        out.starts_with(&format!("yawdyn {}", env!("CARGO_PKG_VERSION"))),
        "{out}"
    );
    for key in ["commit:", "build date:", "target:", "HDF5:"] {
        assert!(out.contains(key), "no {key} in:\n{out}");
    }
    let hdf5 = out.lines().find(|l| l.starts_with("HDF5:")).unwrap();
    let version = hdf5.split_whitespace().nth(1).unwrap();
    let parts: Vec<u32> = version.split('.').map(|p| p.parse().unwrap()).collect();
    assert!(parts.len() == 3 && parts[0] >= 1, "{hdf5}");
}

/// Completions for each shell name the subcommands; the manual page is roff
/// with a section per subcommand.
#[test]
fn completions_and_manual_page_come_from_the_cli_definition() {
    let dir = tempfile::tempdir().unwrap();
    for shell in ["bash", "zsh", "fish", "elvish", "powershell"] {
        let o = yawdyn_in(dir.path(), &["completions", shell]);
        assert_eq!(o.status.code(), Some(0), "{shell}: {}", text(&o));
        let script = String::from_utf8_lossy(&o.stdout);
        for sub in ["sweep", "stability", "merge"] {
            assert!(script.contains(sub), "{shell} completion lacks {sub}");
        }
    }
    let o = yawdyn_in(dir.path(), &["completions", "tcsh"]);
    assert_eq!(o.status.code(), Some(2), "unknown shell is bad input");
    let o = yawdyn_in(dir.path(), &["manpage"]);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o));
    let page = String::from_utf8_lossy(&o.stdout);
    assert!(
        page.starts_with(".ie") || page.contains(".TH yawdyn 1"),
        "not roff"
    );
    for sub in ["run", "sweep", "merge", "completions"] {
        assert!(
            page.contains(&format!(".SH \"COMMAND: yawdyn {sub}\"")),
            "no section for {sub}"
        );
    }
}
