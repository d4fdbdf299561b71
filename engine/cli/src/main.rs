//! The packwright command line (being built).
fn main() {}
