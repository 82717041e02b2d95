//! Any bytes as a link config: the parser answers with a link or an error, never a panic, and
//! every error renders as a message with a problem and a help line.

#![no_main]

use libfuzzer_sys::fuzz_target;
use redress::model::config::parse_link;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    match parse_link(text, None) {
        Ok(link) => {
            // A parsed link is whole: every channel modelled, every denominator usable.
            assert!(!link.paths.is_empty());
            for path in &link.paths {
                assert!(path.channel.a[0] != 0.0 && path.channel.a[0].is_finite());
                assert!(path.channel.b.iter().all(|v| v.is_finite()));
                assert!(path.channel.a.iter().all(|v| v.is_finite()));
            }
        }
        Err(e) => {
            let message = e.to_string();
            assert!(message.contains("problem: "), "{message}");
            assert!(message.contains("help: "), "{message}");
        }
    }
});
