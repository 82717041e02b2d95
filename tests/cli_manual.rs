//! The manual pages and shell completions `redress package-files` writes (and the package
//! ships) describe the binary as it is: every subcommand `--help` lists has its page, and every
//! option of every subcommand is in that page and in the bash, zsh and fish completions. They are
//! generated from the same command-line definition at package build time, so nothing is kept by
//! hand that could drift; this test shows the generation covers everything.
//!
//! Source for the spellings looked for: groff_man(7) (a hyphen is written `\-` in roff), the
//! completion formats as clap_complete 4 writes them (bash: `--opt`, zsh: `--opt[…]` or `--opt=[…]`, fish:
//! `-l opt`).

use std::path::{Path, PathBuf};
use std::process::Command;

fn redress(args: &[&str]) -> String {
    let out = Command::new(env!("CARGO_BIN_EXE_redress"))
        .args(args)
        .output()
        .unwrap();
    assert!(out.status.success(), "{args:?}");
    String::from_utf8(out.stdout).unwrap()
}

/// The subcommands `redress --help` lists (without clap's own `help`).
fn subcommands() -> Vec<String> {
    let help = redress(&["--help"]);
    let commands = help
        .split("Commands:")
        .nth(1)
        .unwrap()
        .split("Options:")
        .next()
        .unwrap();
    commands
        .lines()
        .filter(|l| l.starts_with("  ") && !l.starts_with("   "))
        .filter_map(|l| l.split_whitespace().next())
        .filter(|c| *c != "help")
        .map(str::to_string)
        .collect()
}

/// The long options `redress SUB --help` lists.
fn long_options(sub: &str) -> Vec<String> {
    let help = redress(&[sub, "--help"]);
    let options = help.split("Options:").nth(1).unwrap_or("");
    options
        .lines()
        .filter_map(|l| {
            let l = l.trim_start();
            let l = l
                .strip_prefix('-')
                .and_then(|r| r.get(1..))
                .and_then(|r| r.strip_prefix(", "))
                .unwrap_or(l);
            let name = l.strip_prefix("--")?;
            let name: String = name
                .chars()
                .take_while(|c| c.is_ascii_alphanumeric() || *c == '-')
                .collect();
            Some(name)
        })
        .collect()
}

fn generate() -> PathBuf {
    let dir = std::env::temp_dir().join(format!("redress-manual-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    redress(&["package-files", dir.to_str().unwrap()]);
    dir
}

fn read(dir: &Path, name: &str) -> String {
    std::fs::read_to_string(dir.join(name)).unwrap_or_else(|e| panic!("{name}: {e}"))
}

#[test]
fn every_subcommand_and_option_is_in_the_manual_and_the_completions() {
    let dir = generate();
    let top = read(&dir, "redress.1");
    let bash = read(&dir, "redress.bash");
    let zsh = read(&dir, "_redress");
    let fish = read(&dir, "redress.fish");
    let subs = subcommands();
    assert!(subs.len() >= 10, "{subs:?}");
    let mut checked = 0;
    for sub in &subs {
        let page = read(&dir, &format!("redress-{sub}.1"));
        assert!(
            top.contains(&sub.replace('-', "\\-")),
            "redress.1 lacks {sub}"
        );
        let options = long_options(sub);
        assert!(options.iter().any(|o| o == "help"), "{sub}: {options:?}");
        for option in options {
            let roff = format!("\\-\\-{}", option.replace('-', "\\-"));
            assert!(page.contains(&roff), "redress-{sub}.1 lacks --{option}");
            assert!(
                bash.contains(&format!("--{option}")),
                "bash lacks --{option}"
            );
            assert!(
                zsh.contains(&format!("--{option}[")) || zsh.contains(&format!("--{option}=[")),
                "zsh lacks --{option}"
            );
            let for_sub = format!("using_subcommand {sub}\"");
            let long = format!("-l {option} ");
            assert!(
                fish.lines()
                    .any(|l| l.contains(&for_sub) && l.contains(&long)),
                "fish lacks {sub} --{option}"
            );
            checked += 1;
        }
    }
    assert!(checked >= 50, "only {checked} options checked");
    // The hidden subcommand that writes these files is advertised nowhere.
    assert!(!top.contains("package\\-files"));
    assert!(!dir.join("redress-package-files.1").exists());
    for (shell, text) in [("bash", &bash), ("zsh", &zsh), ("fish", &fish)] {
        assert!(
            !text.contains("package-files"),
            "{shell} offers package-files"
        );
    }
    // The top level's own options are completed too.
    assert!(bash.contains("--version") && fish.contains("-l version"));
    std::fs::remove_dir_all(&dir).unwrap();
}

#[test]
fn an_unwritable_folder_is_an_error_with_the_reason() {
    let file = std::env::temp_dir().join(format!("redress-manual-file-{}", std::process::id()));
    std::fs::write(&file, "not a folder").unwrap();
    let out = Command::new(env!("CARGO_BIN_EXE_redress"))
        .arg("package-files")
        .arg(file.join("inside"))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("cannot write the manual") && err.contains("help:"),
        "{err}"
    );
    std::fs::remove_file(&file).unwrap();
}
