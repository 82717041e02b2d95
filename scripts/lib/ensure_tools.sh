# Shared by scripts/demo.sh, scripts/test.sh and .ci/run (sourced, not run).
#
# ensure_packages PKG...   installs the Debian/Ubuntu packages that are missing, with apt-get when
#                          running as root, or through sudo when it needs no password prompt
#                          (or when a terminal can answer it); otherwise says what to install.
# ensure_cargo             puts cargo on PATH, installing a minimal stable Rust toolchain with
#                          rustup (fetched with curl) only when cargo is nowhere to be found.

missing_packages() {
    local package
    for package in "$@"; do
        if ! dpkg-query -W -f='${Status}' "$package" 2>/dev/null | grep -q "install ok installed"; then
            printf '%s\n' "$package"
        fi
    done
}

ensure_packages() {
    if ! command -v dpkg-query >/dev/null 2>&1; then
        echo "note: not a Debian/Ubuntu system; make sure these are installed: $*" >&2
        return 0
    fi
    local missing
    missing=$(missing_packages "$@" | tr '\n' ' ')
    if [ -z "${missing// /}" ]; then
        return 0
    fi
    local run_as_root=()
    if [ "$(id -u)" -ne 0 ]; then
        if command -v sudo >/dev/null 2>&1 && { sudo -n true 2>/dev/null || [ -t 0 ]; }; then
            run_as_root=(sudo)
        else
            echo "error: missing packages: $missing" >&2
            echo "  help: run as root or with sudo, or install them: apt-get install $missing" >&2
            return 1
        fi
    fi
    echo "installing: $missing" >&2
    # shellcheck disable=SC2086 # one word per package
    "${run_as_root[@]}" env DEBIAN_FRONTEND=noninteractive apt-get update -q >&2
    # shellcheck disable=SC2086
    "${run_as_root[@]}" env DEBIAN_FRONTEND=noninteractive \
        apt-get install -y -q --no-install-recommends $missing >&2
}

ensure_cargo() {
    if command -v cargo >/dev/null 2>&1; then
        return 0
    fi
    if [ -x "$HOME/.cargo/bin/cargo" ]; then
        export PATH="$HOME/.cargo/bin:$PATH"
        return 0
    fi
    ensure_packages curl ca-certificates
    echo "installing a stable Rust toolchain with rustup (into $HOME/.cargo)" >&2
    curl --proto '=https' --tlsv1.2 -sSf https://sh.rustup.rs |
        sh -s -- -y --profile minimal --default-toolchain stable >&2
    export PATH="$HOME/.cargo/bin:$PATH"
}

# What building redress needs: a C toolchain and linker, pkg-config, the ALSA and PipeWire
# headers the live-audio crate links against (libclang for the PipeWire bindings' bindgen), and
# JACK's (the jack crate's build script finds the library with pkg-config, although it loads
# libjack only when the JACK host is used).
BUILD_PACKAGES=(build-essential pkg-config libasound2-dev libpipewire-0.3-dev libclang-dev
    libjack-jackd2-dev)
