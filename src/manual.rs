//! `redress package-files DIR` (hidden): the manual pages and the shell completions, generated
//! from the very command-line definition the binary parses with, so they never drift from the
//! options. The package build runs it (scripts/build-deb.sh) and ships what it writes.

use std::path::Path;

use clap_complete::Shell;

use crate::exit_codes as exit;

/// Writes `redress.1` and one page per subcommand (`redress-run.1`, …), and the completions for
/// bash (`redress.bash`), zsh (`_redress`) and fish (`redress.fish`), into `dir`.
pub fn write_package_files(mut command: clap::Command, dir: &Path) -> u8 {
    let written = std::fs::create_dir_all(dir)
        .and_then(|()| clap_mangen::generate_to(command.clone(), dir))
        .and_then(|()| {
            for shell in [Shell::Bash, Shell::Zsh, Shell::Fish] {
                clap_complete::generate_to(shell, &mut command, "redress", dir)?;
            }
            Ok(())
        });
    match written {
        Ok(()) => exit::OK,
        Err(e) => {
            eprintln!(
                "error: cannot write the manual and completions into {}: {}",
                dir.display(),
                redress::os_error::plain_os_error(&e)
            );
            exit::FAILED
        }
    }
}
