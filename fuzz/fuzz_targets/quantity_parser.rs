//! Fuzz target: the quantity parser (`parse_quantity`, `parse_expecting`)
//! on arbitrary text. The properties checked are in `../checks.rs`.

#![no_main]

use libfuzzer_sys::fuzz_target;

#[path = "../checks.rs"]
mod checks;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        checks::quantity(text);
    }
});
