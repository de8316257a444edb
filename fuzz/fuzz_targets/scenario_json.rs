//! Any text given as a scenario file: parsing and checking return Ok or
//! Err, never panic; a scenario that parses survives a JSON round trip.
#![no_main]

use libfuzzer_sys::fuzz_target;
use tussock_core::Scenario;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    let Ok(scenario) = Scenario::from_json(text) else {
        return;
    };
    let _ = scenario.validate();
    let again = Scenario::from_json(&scenario.to_json_pretty())
        .expect("a parsed scenario must parse again from its own JSON");
    let _ = again.validate();
});
