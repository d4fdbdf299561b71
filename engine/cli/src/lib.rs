//! The packwright command line as a library: the one list of built-in
//! modules, so that benchmarks and tests assemble the same registry as the
//! binary. The binary itself is `main.rs`.

pub mod allocator;
pub mod builtin;
