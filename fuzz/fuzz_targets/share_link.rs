//! Any URL fragment: the share-link decoder returns Ok or Err, never
//! panics; a scenario it accepts encodes to a link that decodes to it.
#![no_main]

use libfuzzer_sys::fuzz_target;
use tussock_app::share::{decode_fragment, encode_fragment};

fuzz_target!(|data: &[u8]| {
    let text = String::from_utf8_lossy(data);
    if let Ok(scenario) = decode_fragment(&text) {
        let again = decode_fragment(&encode_fragment(&scenario))
            .expect("a decoded scenario must decode again from its own link");
        assert_eq!(again, scenario);
    }
});
