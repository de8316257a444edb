//! The command line's hand-parsed arguments (tussock_cli::parse): any text
//! as --quasi-extinction (split at commas, as clap does), as --bounds items
//! (one per line) and as --shard. Each returns Ok or an error that names its
//! option, never panics; what is accepted reads back the same.
#![no_main]

use libfuzzer_sys::fuzz_target;
use tussock_cli::parse::{bounds, quasi_levels, shard};

fuzz_target!(|data: &[u8]| {
    let text = String::from_utf8_lossy(data);

    let levels: Vec<String> = text.split(',').map(str::to_string).collect();
    match quasi_levels(&Some(levels.clone())) {
        Ok(Some(found)) => {
            for (i, level) in levels.iter().enumerate() {
                assert_eq!(found[i].is_none(), level.trim() == "none");
            }
        }
        Ok(None) => panic!("levels were given"),
        Err(e) => assert!(e.to_string().starts_with("--quasi-extinction:"), "{e}"),
    }

    let items: Vec<String> = text.lines().map(str::to_string).collect();
    match bounds(&items) {
        Ok(found) => {
            for (name, (lo, hi)) in found {
                let again = bounds(&[format!("{name}={lo:?}:{hi:?}")]).expect("its own form");
                let (lo2, hi2) = again[&name];
                assert!(lo2.to_bits() == lo.to_bits() || (lo.is_nan() && lo2.is_nan()));
                assert!(hi2.to_bits() == hi.to_bits() || (hi.is_nan() && hi2.is_nan()));
            }
        }
        Err(e) => assert!(e.to_string().starts_with("--bounds:"), "{e}"),
    }

    match shard(&text) {
        Ok(s) => {
            let again = shard(&format!("{}/{}", s.index, s.count)).expect("its own form");
            assert_eq!((again.index, again.count), (s.index, s.count));
        }
        Err(e) => assert!(e.to_string().starts_with("--shard:"), "{e}"),
    }
});
