//! Settings of the memory allocator (mimalloc) that the binary and the
//! benchmark use for a package build, so that its peak resident size stays
//! near what is in use without costing layout time.
//!
//! mimalloc's defaults keep freed memory for a second and commit whole
//! arenas ahead of use; over a build with two threads that held about
//! 50 MiB more at the peak, which comes in the PDF export. Returning freed
//! memory at once throughout cost about a sixth of the build's time instead
//! (the kernel zeroing pages given back and taken again). So a build keeps
//! freed memory for a tenth of a second while Typst lays out, then returns
//! everything freed before the export, and from then on at once (measured
//! with `packwright-bench` and `/usr/bin/time`, DEVELOPERS.md
//! "Performance"). The other commands keep the defaults: a rerun of 1,000
//! items took twice the processor time with prompt return (three times the
//! page faults), for a peak of under 100 MiB. Owns no state.

use libmimalloc_sys::{mi_collect, mi_option_set, mi_option_t};

/// `mi_option_arena_eager_commit` in the `mi_option_e` enum of mimalloc v3
/// (`include/mimalloc.h`; defaults in `src/options.c`), the version
/// libmimalloc-sys builds by default.
/// The crate names only some options; the test below checks the number
/// against the option's documented default.
const ARENA_EAGER_COMMIT: mi_option_t = 4;
/// `mi_option_purge_delay`, in milliseconds (see above).
const PURGE_DELAY: mi_option_t = 15;

/// How long freed memory is kept for reuse during layout, in milliseconds.
const LAYOUT_PURGE_DELAY: std::os::raw::c_long = 100;

/// Makes mimalloc commit arenas only as they are used and keep freed memory
/// briefly. Call before a package build allocates.
pub fn prepare_for_build() {
    // SAFETY: setting an option is safe at any time; both numbers are
    // options of the linked mimalloc (checked by the test below).
    unsafe {
        mi_option_set(PURGE_DELAY, LAYOUT_PURGE_DELAY);
        mi_option_set(ARENA_EAGER_COMMIT, 0);
    }
}

/// Returns the memory freed so far to the system, and later frees at once.
/// Call when the layout is done, before the PDF export.
pub fn release_freed_memory() {
    // SAFETY: as above; collecting is safe at any time.
    unsafe {
        mi_option_set(PURGE_DELAY, 0);
        mi_collect(true);
    }
}

/// The current value of an option, for the test.
#[cfg(test)]
fn option(option: mi_option_t) -> std::os::raw::c_long {
    // SAFETY: reading an option is always safe.
    unsafe { libmimalloc_sys::mi_option_get(option) }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The enum numbers still name the options meant: their defaults are
    /// mimalloc v3's (`src/options.c`: purge delay 1000 ms, arena eager
    /// commit 2), unless the variables MIMALLOC_PURGE_DELAY or
    /// MIMALLOC_ARENA_EAGER_COMMIT set them.
    #[test]
    fn option_numbers_name_the_documented_options() {
        if std::env::var_os("MIMALLOC_PURGE_DELAY").is_none() {
            assert_eq!(option(PURGE_DELAY), 1000);
        }
        if std::env::var_os("MIMALLOC_ARENA_EAGER_COMMIT").is_none() {
            assert_eq!(option(ARENA_EAGER_COMMIT), 2);
        }
        prepare_for_build();
        assert_eq!(option(PURGE_DELAY), LAYOUT_PURGE_DELAY);
        assert_eq!(option(ARENA_EAGER_COMMIT), 0);
        release_freed_memory();
        assert_eq!(option(PURGE_DELAY), 0);
    }
}
