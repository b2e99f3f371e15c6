//! The scenario JSON, parsed and validated.
#![no_main]

use forefield_engine::run::scenario::Scenario;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| {
    if let Ok(scenario) = Scenario::from_json(&String::from_utf8_lossy(bytes)) {
        let _ = scenario.validate();
        let _ = Scenario::from_json(&scenario.to_json());
    }
});
