//! Before a command writes anything, its outputs are checked together: none may be one of its
//! inputs (writing would destroy the input, even when asked to replace), none may replace an
//! existing file unless the user asked for that, two outputs may not share a name, and each
//! must go in a folder that exists. Checking them all first means a refused command writes
//! nothing at all, rather than its first output and then an error.

use std::os::unix::fs::MetadataExt;
use std::path::{Component, Path, PathBuf};

use super::IoError;

/// What a command may do to files that are already there.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Existing {
    /// Refuse to write over an existing file (the default).
    #[default]
    Keep,
    /// Write over it (the user said `--replace`).
    Replace,
}

/// The folder `file` goes in ("." for a bare file name).
pub fn folder_of(file: &Path) -> &Path {
    match file.parent() {
        Some(parent) if !parent.as_os_str().is_empty() => parent,
        _ => Path::new("."),
    }
}

/// Checks every output file of one command against its inputs and against each other.
pub fn check_output_files(
    outputs: &[&Path],
    inputs: &[&Path],
    existing: Existing,
) -> Result<(), IoError> {
    for (i, output) in outputs.iter().enumerate() {
        if outputs[..i]
            .iter()
            .any(|earlier| same_name(earlier, output))
        {
            return Err(IoError::OutputTwice {
                file: output.to_path_buf(),
            });
        }
        refuse_input(output, inputs)?;
        match std::fs::metadata(output) {
            Ok(meta) if meta.is_dir() => {
                return Err(IoError::OutputNotFile {
                    file: output.to_path_buf(),
                    is_folder: true,
                })
            }
            Ok(_) if existing == Existing::Keep => {
                return Err(IoError::OutputExists {
                    file: output.to_path_buf(),
                })
            }
            Ok(_) => {}
            Err(_) => require_folder(output)?,
        }
    }
    Ok(())
}

/// Checks an output folder (pictures, reports): it may exist already or be created, but not be
/// a file, and in particular not one of the inputs.
pub fn check_output_folder(folder: &Path, inputs: &[&Path]) -> Result<(), IoError> {
    refuse_input(folder, inputs)?;
    match std::fs::metadata(folder) {
        Ok(meta) if !meta.is_dir() => Err(IoError::OutputNotFile {
            file: folder.to_path_buf(),
            is_folder: false,
        }),
        _ => Ok(()),
    }
}

fn refuse_input(output: &Path, inputs: &[&Path]) -> Result<(), IoError> {
    if inputs.iter().any(|input| same_file(input, output)) {
        return Err(IoError::OutputIsInput {
            file: output.to_path_buf(),
        });
    }
    Ok(())
}

fn require_folder(output: &Path) -> Result<(), IoError> {
    let folder = folder_of(output);
    if std::fs::metadata(folder).is_ok_and(|m| m.is_dir()) {
        return Ok(());
    }
    Err(IoError::OutputFolderMissing {
        file: output.to_path_buf(),
        folder: folder.to_path_buf(),
    })
}

/// The same file: by device and inode when both exist (a second name or a link to it counts),
/// else by name.
pub fn same_file(a: &Path, b: &Path) -> bool {
    match (std::fs::metadata(a), std::fs::metadata(b)) {
        (Ok(x), Ok(y)) => x.dev() == y.dev() && x.ino() == y.ino(),
        _ => same_name(a, b),
    }
}

/// The same path once made absolute and `.`/`..` are resolved by name.
fn same_name(a: &Path, b: &Path) -> bool {
    normalised(a) == normalised(b)
}

fn normalised(path: &Path) -> PathBuf {
    let absolute = std::path::absolute(path).unwrap_or_else(|_| path.to_path_buf());
    let mut out = PathBuf::new();
    for component in absolute.components() {
        match component {
            Component::CurDir => {}
            Component::ParentDir => {
                out.pop();
            }
            other => out.push(other),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn outputs_are_checked_against_inputs_existing_files_and_each_other() {
        let dir = tempfile::tempdir().unwrap();
        let input = dir.path().join("sweep.wav");
        std::fs::write(&input, b"x").unwrap();
        let fresh = dir.path().join("fit.toml");
        let ok = check_output_files(&[&fresh], &[&input], Existing::Keep);
        assert!(ok.is_ok());

        let same = check_output_files(&[&input], &[&input], Existing::Replace);
        assert!(matches!(same, Err(IoError::OutputIsInput { .. })));
        let spelt_otherwise = dir.path().join(".").join("sweep.wav");
        let same = check_output_files(&[&spelt_otherwise], &[&input], Existing::Replace);
        assert!(matches!(same, Err(IoError::OutputIsInput { .. })));

        let existing = dir.path().join("hand-written.toml");
        std::fs::write(&existing, b"[link]").unwrap();
        let kept = check_output_files(&[&existing], &[&input], Existing::Keep);
        assert!(matches!(kept, Err(IoError::OutputExists { .. })));
        assert!(check_output_files(&[&existing], &[&input], Existing::Replace).is_ok());

        let twice = check_output_files(&[&fresh, &fresh], &[], Existing::Replace);
        assert!(matches!(twice, Err(IoError::OutputTwice { .. })));

        let nowhere = dir.path().join("no-such-folder").join("out.wav");
        match check_output_files(&[&nowhere], &[], Existing::Keep) {
            Err(IoError::OutputFolderMissing { folder, .. }) => {
                assert_eq!(folder, dir.path().join("no-such-folder"))
            }
            other => panic!("{other:?}"),
        }
        let folder = check_output_files(&[dir.path()], &[], Existing::Replace);
        assert!(matches!(
            folder,
            Err(IoError::OutputNotFile {
                is_folder: true,
                ..
            })
        ));
        let file_in_the_way = check_output_folder(&existing, &[]);
        assert!(matches!(
            file_in_the_way,
            Err(IoError::OutputNotFile {
                is_folder: false,
                ..
            })
        ));
        assert!(matches!(
            check_output_folder(&input, &[&input]),
            Err(IoError::OutputIsInput { .. })
        ));
    }

    #[test]
    fn a_bare_name_lives_in_the_current_folder() {
        assert_eq!(folder_of(Path::new("out.wav")), Path::new("."));
        assert_eq!(folder_of(Path::new("a/out.wav")), Path::new("a"));
    }
}
