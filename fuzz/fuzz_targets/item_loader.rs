//! Fuzz target: the item loader on arbitrary bytes, both the YAML reader
//! (`yaml::parse_bytes`) and the check of a project whose one item file
//! holds the bytes. The properties checked are in `../checks.rs`.

#![no_main]

use std::sync::OnceLock;

use libfuzzer_sys::fuzz_target;

#[path = "../checks.rs"]
mod checks;

static SCRATCH: OnceLock<checks::Scratch> = OnceLock::new();

fuzz_target!(|data: &[u8]| {
    let scratch = SCRATCH.get_or_init(checks::Scratch::new);
    checks::item(data, scratch);
});
