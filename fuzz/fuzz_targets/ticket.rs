//! Job tickets (TOML) from arbitrary text: an error naming the file, or a
//! ticket that prints back to TOML and parses to the same settings.
#![no_main]

use libfuzzer_sys::fuzz_target;
use platesmith::ticket::Ticket;
use std::path::Path;

fuzz_target!(|data: &[u8]| {
    let text = String::from_utf8_lossy(data);
    let path = Path::new("fuzz.toml");
    match Ticket::parse(&text, path) {
        Ok(ticket) => {
            let again = ticket.to_toml().expect("a parsed ticket prints");
            let back = Ticket::parse(&again, path).expect("a printed ticket parses");
            assert_eq!(back.model, ticket.model);
            assert_eq!(back.output, ticket.output);
            assert_eq!(back.limits, ticket.limits);
        }
        Err(e) => {
            let line = e.to_string();
            assert!(line.starts_with("fuzz.toml"), "{line}");
            assert!(!line.contains('\n'), "{line}");
        }
    }
});
