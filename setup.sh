#!/bin/sh
# yawdyn set-up: the README's first command.
#
#   sh setup.sh           check the prerequisites, install what is missing,
#                         build, and run the torque-split demo (the main job)
#   sh setup.sh deps      only check and install the prerequisites
#   sh setup.sh release   static-HDF5 build, checked with ldd, packed with the
#                         scripts, demo vehicles, docs, completions and man page
#                         into <target dir>/dist/yawdyn-VERSION-TARGET.tar.gz
#
# HDF5: found where the HDF5 binding looks (HDF5_DIR, pkg-config, the standard
# folders, Homebrew); else installed with the system package manager when this
# user may (root, sudo; apt-get, dnf/yum, brew); else built from the bundled
# source and linked statically (cargo feature static-hdf5; needs cmake 3.26 or
# newer, taken from pip into <target dir>/tools when the system's is older).
#
# Environment:
#   YAWDYN_NO_INSTALL=1   never install system packages; report what is missing
#   YAWDYN_HDF5=static    build the bundled static HDF5 even when a system one exists
#   YAWDYN_SETUP_PRETEND_MISSING="hdf5 cmake"
#                         treat these as absent (to exercise the messages on a
#                         machine that has them; used by the tests)
#
# POSIX sh; exit status 0 done, 1 a prerequisite is missing or a step failed,
# 2 bad usage.
set -eu
cd "$(dirname "$0")"

TARGET_DIR=${CARGO_TARGET_DIR:-target}
FEATURES=""
CMAKE_MIN_MAJOR=3
CMAKE_MIN_MINOR=26

say() { printf 'setup: %s\n' "$*" >&2; }

# A prerequisite is missing and cannot be installed: one paragraph, exit 1.
fail_missing() {
    printf '\n%s\n\n' "$*" >&2
    exit 1
}

pretend_missing() {
    case " ${YAWDYN_SETUP_PRETEND_MISSING:-} " in
        *" $1 "*) return 0 ;;
        *) return 1 ;;
    esac
}

# --- how to install system packages on this machine ---------------------------
OS=$(uname -s)
SUDO=""
PKG=""
detect_installer() {
    if [ "${YAWDYN_NO_INSTALL:-0}" = 1 ]; then return; fi
    if [ "$OS" = Darwin ]; then
        command -v brew >/dev/null 2>&1 && PKG=brew
        return
    fi
    if [ "$(id -u)" -ne 0 ]; then
        if ! command -v sudo >/dev/null 2>&1; then return; fi
        # Ask for a password only when someone can type it.
        if ! sudo -n true 2>/dev/null && ! [ -t 0 ]; then return; fi
        SUDO=sudo
    fi
    if command -v apt-get >/dev/null 2>&1; then
        PKG=apt
    elif command -v dnf >/dev/null 2>&1; then
        PKG=dnf
    elif command -v yum >/dev/null 2>&1; then
        PKG=yum
    fi
}

APT_UPDATED=0
# install_pkgs APT_NAMES -- DNF_NAMES -- BREW_NAMES
install_pkgs() {
    apt_names=$1 dnf_names=$2 brew_names=$3
    case "$PKG" in
        apt)
            if [ "$APT_UPDATED" = 0 ]; then
                $SUDO apt-get update -qq
                APT_UPDATED=1
            fi
            say "installing (apt-get): $apt_names"
            # shellcheck disable=SC2086
            $SUDO env DEBIAN_FRONTEND=noninteractive apt-get install -y -qq $apt_names
            ;;
        dnf | yum)
            say "installing ($PKG): $dnf_names"
            # shellcheck disable=SC2086
            $SUDO "$PKG" install -y -q $dnf_names
            ;;
        brew)
            say "installing (brew): $brew_names"
            # shellcheck disable=SC2086
            brew install $brew_names
            ;;
        *) return 1 ;;
    esac
}

# --- checks ------------------------------------------------------------------
need_cargo() {
    if ! pretend_missing cargo && command -v cargo >/dev/null 2>&1; then return; fi
    fail_missing "yawdyn is written in Rust and needs its toolchain (cargo, \
rustc 1.85 or newer), which is not on PATH. Install it from https://rustup.rs \
(any system: curl --proto '=https' -sSf https://sh.rustup.rs | sh), or with \
the system's packages where they are recent enough (Debian/Ubuntu: sudo apt-get \
install cargo; Fedora/RHEL: sudo dnf install cargo; macOS: brew install rust), \
then run sh setup.sh again."
}

need_cc() {
    if ! pretend_missing cc && command -v cc >/dev/null 2>&1; then return; fi
    install_pkgs "build-essential" "gcc gcc-c++ make" "" 2>/dev/null || true
    if [ "$OS" = Darwin ] && ! command -v cc >/dev/null 2>&1; then
        xcode-select --install 2>/dev/null || true
    fi
    if ! pretend_missing cc && command -v cc >/dev/null 2>&1; then return; fi
    fail_missing "Building yawdyn needs a C compiler and linker (cc), which is \
missing. Install it with: Debian/Ubuntu: sudo apt-get install build-essential; \
Fedora/RHEL: sudo dnf install gcc gcc-c++ make; macOS: xcode-select --install. \
Then run sh setup.sh again."
}

# HDF5 headers where the binding looks for them (hdf5-metno-sys): HDF5_DIR,
# pkg-config, the standard folders, Homebrew.
hdf5_found() {
    if pretend_missing hdf5; then return 1; fi
    if [ -n "${HDF5_DIR:-}" ] && [ -f "$HDF5_DIR/include/H5pubconf.h" ]; then return 0; fi
    if command -v pkg-config >/dev/null 2>&1 && pkg-config --exists hdf5 2>/dev/null; then
        return 0
    fi
    for h in /usr/include/hdf5/serial/H5pubconf.h /usr/include/H5pubconf.h; do
        if [ -f "$h" ]; then return 0; fi
    done
    if [ "$OS" = Darwin ] && command -v brew >/dev/null 2>&1; then
        prefix=$(brew --prefix hdf5 2>/dev/null || true)
        if [ -n "$prefix" ] && [ -f "$prefix/include/H5pubconf.h" ]; then return 0; fi
    fi
    return 1
}

# cmake on PATH (or in our tools folder) at least 3.26, the bundled HDF5's minimum.
cmake_ok() {
    if pretend_missing cmake; then return 1; fi
    if [ -x "$TARGET_DIR/tools/cmake/bin/cmake" ]; then
        PATH="$(cd "$TARGET_DIR/tools/cmake/bin" && pwd):$PATH"
        export PATH
    fi
    command -v cmake >/dev/null 2>&1 || return 1
    version=$(cmake --version | sed -n 's/^cmake version \([0-9]*\)\.\([0-9]*\).*/\1 \2/p')
    # shellcheck disable=SC2086 # split "MAJOR MINOR" into two words
    set -- $version
    [ "$#" -eq 2 ] || return 1
    [ "$1" -gt "$CMAKE_MIN_MAJOR" ] || { [ "$1" -eq "$CMAKE_MIN_MAJOR" ] && [ "$2" -ge "$CMAKE_MIN_MINOR" ]; }
}

# A new-enough cmake: the system's packages, else pip into <target dir>/tools.
need_cmake() {
    if cmake_ok; then return 0; fi
    install_pkgs "cmake" "cmake" "cmake" 2>/dev/null || true
    if cmake_ok; then return 0; fi
    if pretend_missing cmake; then return 1; fi
    # Debian 12 ships cmake 3.25; the Python package index has current ones.
    if [ "$PKG" = apt ] && ! python3 -m venv --help >/dev/null 2>&1; then
        install_pkgs "python3-venv" "" "" 2>/dev/null || true
    fi
    say "installing cmake from the Python package index into $TARGET_DIR/tools/cmake"
    mkdir -p "$TARGET_DIR/tools"
    if python3 -m venv "$TARGET_DIR/tools/cmake" >/dev/null 2>&1 &&
        "$TARGET_DIR/tools/cmake/bin/python" -m pip install -q cmake >/dev/null 2>&1; then
        cmake_ok && return 0
    fi
    return 1
}

# Chooses how HDF5 is linked: FEATURES is empty (system HDF5) or static-hdf5.
need_hdf5() {
    if [ "${YAWDYN_HDF5:-}" != static ]; then
        if hdf5_found; then return; fi
        install_pkgs "libhdf5-dev pkg-config" "hdf5-devel" "hdf5 pkg-config" || true
        if hdf5_found; then return; fi
        say "no system HDF5 and no way to install one: building the bundled HDF5 from source"
    fi
    if need_cmake; then
        FEATURES="--features static-hdf5"
        return
    fi
    fail_missing "yawdyn needs the HDF5 C library and headers, which are not \
installed, and this script can neither install them (it installs system \
packages only as root, with sudo, or with Homebrew) nor build them from the \
bundled source (that needs cmake 3.26 or newer). Install HDF5 with: \
Debian/Ubuntu: sudo apt-get install libhdf5-dev pkg-config; Fedora/RHEL: sudo \
dnf install hdf5-devel; macOS: brew install hdf5. Then run sh setup.sh again. \
(Or set HDF5_DIR to an HDF5 installation, or install cmake 3.26 or newer, \
e.g. python3 -m pip install --user cmake, for the static build.)"
}

prerequisites() {
    detect_installer
    need_cargo
    need_cc
    need_hdf5
    if [ -n "$FEATURES" ]; then
        say "prerequisites present (HDF5: built from the bundled source, linked statically)"
    else
        say "prerequisites present (HDF5: system library)"
    fi
}

# --- actions -----------------------------------------------------------------
# The main job: the first sweep of the README's torque-split study, and its plot.
demo() {
    prerequisites
    # shellcheck disable=SC2086
    cargo build --release $FEATURES
    say "torque-split demo: 44 runs of scripts/power_on_exit.rhai (front share 0..1 x lateral acceleration 3..6 m/s^2)"
    # shellcheck disable=SC2086
    cargo run --release --quiet $FEATURES -- sweep scripts/power_on_exit.rhai \
        --vary drive.front_share=0:1:11 --vary manoeuvre.lat_accel=3:6:4 \
        --channels sideslip,ax,path_curvature --out results/torque_split_same_torque.h5
    # shellcheck disable=SC2086
    cargo run --release --quiet $FEATURES -- plot results/torque_split_same_torque.h5 \
        --metric path_radius_growth_ratio_2s --by manoeuvre.lat_accel \
        --out results/torque_split_same_torque.svg
    say "done: results/torque_split_same_torque.h5 and results/torque_split_same_torque.svg"
    if [ -n "$FEATURES" ]; then
        # Without a system HDF5 every cargo command needs the same feature.
        say "next: cargo test --features static-hdf5 (the tests), or cargo install --path . --features static-hdf5"
    else
        say "next: cargo test (the tests), or cargo install --path . (puts yawdyn on PATH)"
    fi
}

release() {
    detect_installer
    need_cargo
    need_cc
    if ! need_cmake; then
        fail_missing "The release build compiles HDF5 from the bundled source \
and needs cmake 3.26 or newer, which this script could not find or install. \
Install it with: Debian/Ubuntu: sudo apt-get install cmake (Debian 12 has 3.25: \
use python3 -m pip install --user cmake); Fedora/RHEL: sudo dnf install cmake; \
macOS: brew install cmake. Then run sh setup.sh release again."
    fi
    cargo build --release --features static-hdf5
    bin="$TARGET_DIR/release/yawdyn"
    check_no_shared_hdf5 "$bin"
    version=$("$bin" -V | sed -n 's/^yawdyn \([^ ]*\).*/\1/p')
    triple=$(rustc -vV | sed -n 's/^host: //p')
    name="yawdyn-$version-$triple"
    stage="$TARGET_DIR/dist/$name"
    rm -rf "$stage"
    mkdir -p "$stage/completions" "$stage/man"
    cp "$bin" "$stage/yawdyn"
    cp README.md CHANGELOG.md DEVELOPERS.md "$stage/"
    if [ -d docs ]; then cp -R docs "$stage/"; fi
    mkdir -p "$stage/results"
    cp -R results/figures "$stage/results/" 2>/dev/null || true
    cp -R scripts "$stage/"
    "$bin" completions bash >"$stage/completions/yawdyn.bash"
    "$bin" completions zsh >"$stage/completions/_yawdyn"
    "$bin" completions fish >"$stage/completions/yawdyn.fish"
    "$bin" manpage >"$stage/man/yawdyn.1"
    (cd "$TARGET_DIR/dist" && tar -czf "$name.tar.gz" "$name")
    smoke_test "$stage/yawdyn"
    say "release archive: $TARGET_DIR/dist/$name.tar.gz"
}

# The static binary must not load a shared HDF5.
check_no_shared_hdf5() {
    if command -v ldd >/dev/null 2>&1; then
        libs=$(ldd "$1" 2>&1 || true)
    elif command -v otool >/dev/null 2>&1; then
        libs=$(otool -L "$1")
    else
        say "neither ldd nor otool: cannot check the shared libraries"
        return
    fi
    if printf '%s\n' "$libs" | grep -qi hdf5; then
        printf '%s\n' "$libs" >&2
        say "FAILED: the static build still loads a shared HDF5"
        exit 1
    fi
    say "shared libraries of $1 (no HDF5):"
    printf '%s\n' "$libs" | sed 's/^/    /' >&2
}

# The packed binary runs from an unrelated folder and finds its shipped files.
smoke_test() {
    bin=$(cd "$(dirname "$1")" && pwd)/yawdyn
    work=$(mktemp -d)
    (
        cd "$work"
        export XDG_CACHE_HOME="$work/cache"
        "$bin" --version >&2
        "$bin" vehicle hybrid_crossover >/dev/null
        "$bin" run step_steer --quiet --out "$work/step_steer.h5"
    ) || { rm -rf "$work"; say "FAILED: the packed binary does not run from another folder"; exit 1; }
    rm -rf "$work"
    say "smoke test passed: the packed binary runs a shipped script from another folder"
}

case "${1:-demo}" in
    demo) demo ;;
    deps) prerequisites ;;
    release) release ;;
    -h | --help) sed -n '2,25p' "$0" | sed 's/^# \{0,1\}//' ;;
    *)
        say "unknown action '$1' (use: demo, deps, release)"
        exit 2
        ;;
esac
