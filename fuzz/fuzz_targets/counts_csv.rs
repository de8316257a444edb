//! Any text pasted or dropped as counts: the reader returns Ok or Err,
//! never panics; data it accepts passes the checks a fit applies.
#![no_main]

use libfuzzer_sys::fuzz_target;
use tussock_core::data::{read_counts, ImportOptions};

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    for species in [&["prey"][..], &["prey", "predator"][..]] {
        let species: Vec<String> = species.iter().map(|s| s.to_string()).collect();
        if let Ok(imported) = read_counts(text, &species, "days", &ImportOptions::default()) {
            imported
                .data
                .validate(species.len())
                .expect("imported counts must pass the data checks");
        }
    }
});
