//! The PNG height map with its JSON sidecar: the first byte says how many of the next bytes
//! (times four) are sidecar text; the rest is the PNG.
#![no_main]

use forefield_engine::io::heightmap_png::read_heightmap_png;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|bytes: &[u8]| {
    let Some((&n, rest)) = bytes.split_first() else {
        return;
    };
    let split = (usize::from(n) * 4).min(rest.len());
    let (sidecar, png) = rest.split_at(split);
    let sidecar = String::from_utf8_lossy(sidecar);
    let _ = read_heightmap_png(png, &sidecar, "fuzzed.png");
});
