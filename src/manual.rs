//! `redress package-files DIR` (hidden): the manual pages and the shell completions, generated
//! from the very command-line definition the binary parses with, so they never drift from the
//! options. The package build runs it (scripts/build-deb.sh) and ships what it writes.

use std::path::Path;

use clap_complete::Shell;

use crate::exit_codes as exit;

/// The name the completions complete.
const BINARY: &str = "redress";

/// Writes `redress.1` and one page per subcommand (`redress-run.1`, …), and the completions for
/// bash (`redress.bash`), zsh (`_redress`) and fish (`redress.fish`), into `dir`.
pub fn write_package_files(command: clap::Command, dir: &Path) -> u8 {
    let written = std::fs::create_dir_all(dir)
        .and_then(|()| clap_mangen::generate_to(command.clone(), dir))
        .and_then(|()| {
            let mut advertised = without_hidden_subcommands(&command);
            for shell in [Shell::Bash, Shell::Zsh, Shell::Fish] {
                clap_complete::generate_to(shell, &mut advertised, BINARY, dir)?;
            }
            Ok(())
        });
    match written {
        Ok(()) => exit::OK,
        Err(e) => {
            eprintln!(
                "error: cannot write the manual and completions into {}: {}\n  help: name a \
                 folder you may write to (it is created when missing)",
                dir.display(),
                redress::os_error::plain_os_error(&e)
            );
            exit::FAILED
        }
    }
}

/// The command as the completions offer it: the bash and zsh generators of clap_complete list
/// hidden subcommands too, so those (this one among them) are left out of the copy they see.
fn without_hidden_subcommands(command: &clap::Command) -> clap::Command {
    if !command.get_subcommands().any(|s| s.is_hide_set()) {
        return command.clone();
    }
    clap::Command::new(BINARY)
        .version(env!("CARGO_PKG_VERSION"))
        .about(command.get_about().cloned().unwrap_or_default())
        .args(
            command
                .get_arguments()
                .filter(|a| !a.is_hide_set())
                .cloned(),
        )
        .subcommands(
            command
                .get_subcommands()
                .filter(|s| !s.is_hide_set())
                .cloned(),
        )
}
