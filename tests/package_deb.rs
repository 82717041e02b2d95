//! The Debian package, installed for real: `dpkg -i` puts the binary, its manual page, the
//! completions, the units, the example configs and the README in place and creates the system
//! account; `dpkg -r` takes every file away again, leaving only what a user may have changed
//! (the config folder) and the account.
//!
//! It changes the machine, so it runs only when REDRESS_DEB_PACKAGE names a package built by
//! scripts/build-deb.sh, as root, with no redress package installed (scripts/test.sh does
//! that); otherwise it says why it did nothing.
//!
//! Source: dpkg(1), dpkg-query(1), man(1) `-w`; Debian policy 10.7 (files in /etc the user
//! may change survive removal) and 12.1 (manual pages compressed).

use std::path::Path;
use std::process::{Command, Output};

fn run(program: &str, args: &[&str]) -> Output {
    Command::new(program)
        .args(args)
        .output()
        .unwrap_or_else(|e| panic!("{program}: {e}"))
}

fn ok(program: &str, args: &[&str]) -> String {
    let out = run(program, args);
    assert!(
        out.status.success(),
        "{program} {args:?}: {}{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8_lossy(&out.stdout).into_owned()
}

fn installed() -> bool {
    run("dpkg-query", &["-W", "-f=${Status}", "redress"])
        .stdout
        .starts_with(b"install ok installed")
}

#[test]
fn the_package_installs_everything_and_removes_it_again() {
    let Some(package) = std::env::var_os("REDRESS_DEB_PACKAGE") else {
        eprintln!(
            "skipped: set REDRESS_DEB_PACKAGE to a package from scripts/build-deb.sh and run as \
             root (scripts/test.sh does); this test installs and removes it"
        );
        return;
    };
    let package = package.to_str().unwrap().to_string();
    assert_eq!(
        ok("id", &["-u"]).trim(),
        "0",
        "dpkg -i needs root; REDRESS_DEB_PACKAGE was set"
    );
    assert!(
        !installed(),
        "a redress package is installed already: this test would replace it; remove it first"
    );

    ok("dpkg", &["-i", &package]);
    let files: Vec<String> = ok("dpkg-query", &["-L", "redress"])
        .lines()
        .map(str::to_string)
        .collect();
    let removal = Removal;

    let version = ok("/usr/bin/redress", &["--version"]);
    assert_eq!(
        version.trim(),
        format!("redress {}", env!("CARGO_PKG_VERSION"))
    );
    let page = ok("man", &["-w", "redress"]);
    assert_eq!(page.trim(), "/usr/share/man/man1/redress.1.gz");
    let run_page = ok("man", &["-w", "redress-run"]);
    assert!(run_page.contains("redress-run.1"), "{run_page}");
    for expected in [
        "/usr/share/bash-completion/completions/redress",
        "/usr/share/zsh/vendor-completions/_redress",
        "/usr/share/fish/vendor_completions.d/redress.fish",
        "/lib/systemd/system/redress.service",
        "/lib/systemd/system/redress@.service",
        "/usr/lib/systemd/user/redress.service",
        "/usr/share/doc/redress/README.md",
        "/usr/share/doc/redress/examples/echo_line.toml",
    ] {
        assert!(Path::new(expected).is_file(), "{expected} not installed");
        assert!(files.iter().any(|f| f == expected), "{expected} not listed");
    }
    let completion =
        std::fs::read_to_string("/usr/share/bash-completion/completions/redress").unwrap();
    assert!(completion.contains("--metrics-file"));
    // The account the system units run as: a system user in the audio group, no login.
    let account = ok("getent", &["passwd", "redress"]);
    assert!(
        account.trim_end().ends_with(":/usr/sbin/nologin"),
        "{account}"
    );
    let uid: u32 = account.split(':').nth(2).unwrap().parse().unwrap();
    assert!(uid < 1000, "a system account: {account}");
    let groups = ok("id", &["-nG", "redress"]);
    assert!(groups.split_whitespace().any(|g| g == "audio"), "{groups}");
    assert!(Path::new("/etc/redress").is_dir());
    // What the user writes there must survive the removal.
    std::fs::write("/etc/redress/link.toml", "# the user's own config\n").unwrap();

    drop(removal);
    assert!(!installed());
    let left: Vec<&String> = files
        .iter()
        .filter(|f| {
            let p = Path::new(f.as_str());
            p.exists() && !p.is_dir()
        })
        .collect();
    assert!(left.is_empty(), "left behind by dpkg -r: {left:?}");
    assert!(
        Path::new("/etc/redress/link.toml").is_file(),
        "the user's config survives"
    );
    std::fs::remove_file("/etc/redress/link.toml").unwrap();
    ok("dpkg", &["--purge", "redress"]);
    assert!(
        !Path::new("/etc/redress").exists(),
        "purge removes the empty folder"
    );
}

/// Removes the package when dropped, so a failing assertion does not leave it installed.
struct Removal;

impl Drop for Removal {
    fn drop(&mut self) {
        if installed() {
            let out = run("dpkg", &["-r", "redress"]);
            if !out.status.success() && !std::thread::panicking() {
                panic!("dpkg -r: {}", String::from_utf8_lossy(&out.stderr));
            }
        }
    }
}
