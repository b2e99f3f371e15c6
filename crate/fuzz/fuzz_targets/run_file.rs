//! The recorded run's bytes (the timeline file the page and `forefield export` read).
#![no_main]

use forefield_engine::run::timeline::Timeline;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| {
    if let Ok(timeline) = Timeline::from_bytes(bytes) {
        let _ = timeline.to_bytes();
    }
});
