//! Operating-system errors in plain words.
//!
//! The standard library's text for an OS error ends in the raw code ("No such file or directory
//! (os error 2)"), which tells a user nothing they can act on. Every message that reports a file,
//! folder or socket problem goes through [`plain_os_error`] instead, so the words are the same
//! wherever the problem shows up.

use std::io::{Error, ErrorKind};

/// What went wrong, in words a user can act on, without the raw error number.
pub fn plain_os_error(error: &Error) -> String {
    let words = match error.kind() {
        ErrorKind::NotFound => "no such file or folder",
        ErrorKind::PermissionDenied => "permission denied",
        ErrorKind::AlreadyExists => "something of that name already exists",
        ErrorKind::IsADirectory => "it is a folder, not a file",
        ErrorKind::NotADirectory => "a part of the path is a file, not a folder",
        ErrorKind::DirectoryNotEmpty => "the folder is not empty",
        ErrorKind::StorageFull => "the disk is full",
        ErrorKind::QuotaExceeded => "the disk quota is used up",
        ErrorKind::ReadOnlyFilesystem => "the file system is read-only",
        ErrorKind::FileTooLarge => "the file is too large for the file system",
        ErrorKind::InvalidFilename => "the name is too long or not allowed",
        ErrorKind::ConnectionRefused => "nothing is listening there",
        ErrorKind::ConnectionReset | ErrorKind::ConnectionAborted => {
            "the other end closed the connection"
        }
        ErrorKind::BrokenPipe => "the other end closed the connection",
        ErrorKind::TimedOut | ErrorKind::WouldBlock => "no answer in time",
        ErrorKind::Interrupted => "interrupted",
        ErrorKind::OutOfMemory => "out of memory",
        ErrorKind::UnexpectedEof => "the data end too early",
        _ => return without_error_number(&error.to_string()),
    };
    words.to_string()
}

/// "Text (os error 17)" → "text": the standard library's wording without the number, first
/// letter lowered so it reads inside a sentence. For messages that reach us as text from a
/// library (a drawing backend, say) with an OS error inside.
pub fn without_error_number(text: &str) -> String {
    let mut bare = text.to_string();
    while let Some(at) = bare.find(" (os error ") {
        let Some(close) = bare[at..].find(')') else {
            break;
        };
        bare.replace_range(at..at + close + 1, "");
    }
    let mut chars = bare.chars();
    match chars.next() {
        Some(first) => first.to_lowercase().chain(chars).collect(),
        None => String::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn known_kinds_have_words_and_no_number() {
        // ENOENT = 2, EEXIST = 17, EACCES = 13 on Linux (errno(3); common practice).
        for (code, words) in [
            (2, "no such file or folder"),
            (17, "something of that name already exists"),
            (13, "permission denied"),
            (20, "a part of the path is a file, not a folder"),
        ] {
            let text = plain_os_error(&Error::from_raw_os_error(code));
            assert_eq!(text, words);
            assert!(!text.contains("os error"));
        }
    }

    #[test]
    fn other_errors_lose_their_number() {
        // ENOTTY = 25: no kind of its own in the standard library.
        let text = plain_os_error(&Error::from_raw_os_error(25));
        assert!(!text.contains("os error"), "{text}");
        assert!(!text.is_empty());
        assert_eq!(without_error_number("Odd (os error 99)"), "odd");
        assert_eq!(without_error_number("plain"), "plain");
        assert_eq!(
            without_error_number("Drawing failed: Permission denied (os error 13), giving up"),
            "drawing failed: Permission denied, giving up"
        );
    }
}
