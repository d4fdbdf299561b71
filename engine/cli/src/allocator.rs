//! Settings of the memory allocator (mimalloc) that the binary and the
//! benchmark use: small pages for every command, and for a package build a
//! peak resident size near what is in use without costing layout time.
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
//! page faults), for a peak of under 100 MiB.
//!
//! Every command turns transparent huge pages off for the process
//! ([`use_small_pages`]). mimalloc asks the kernel for huge pages where it
//! may; each first touch of a 2 MiB page then has the kernel zero all of it,
//! and each purge gives back and takes again a whole one. perf put 15 % of a
//! build's processor time there (`clear_page_erms` under
//! `do_huge_pmd_anonymous_page`); with small pages a build's system time fell
//! from 0.8 to 1.3 s to 0.3 s and its peak by 35 MB, and a one-change rerun of
//! 1,000 items took about a third less. Owns no state.

use libmimalloc_sys::{mi_collect, mi_option_set, mi_option_t};

/// `mi_option_arena_eager_commit` in the `mi_option_e` enum of mimalloc v3
/// (`include/mimalloc.h`; defaults in `src/options.c`), the version
/// libmimalloc-sys builds by default.
/// The crate names only some options; the test below checks the number
/// against the option's documented default.
const ARENA_EAGER_COMMIT: mi_option_t = 4;
/// `mi_option_purge_delay`, in milliseconds (see above).
const PURGE_DELAY: mi_option_t = 15;

/// `mi_option_allow_thp` (see above).
const ALLOW_THP: mi_option_t = 43;

/// How long freed memory is kept for reuse during layout, in milliseconds.
const LAYOUT_PURGE_DELAY: std::os::raw::c_long = 100;

/// Keeps this process on small (4 KiB) pages. Call first thing in `main`:
/// mimalloc's option covers the memory it maps from then on, the process
/// setting (Linux `prctl`) the memory it has mapped already.
pub fn use_small_pages() {
    // SAFETY: setting an option is safe at any time (the number is checked
    // by the test below).
    unsafe {
        mi_option_set(ALLOW_THP, 0);
    }
    #[cfg(target_os = "linux")]
    // SAFETY: PR_SET_THP_DISABLE takes one integer argument and changes only
    // how the kernel backs this process's memory. Should it fail (an old
    // kernel), the process runs as before, only slower.
    unsafe {
        libc::prctl(libc::PR_SET_THP_DISABLE, 1, 0, 0, 0);
    }
}

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
    /// commit 2, huge pages allowed), unless the variables
    /// MIMALLOC_PURGE_DELAY, MIMALLOC_ARENA_EAGER_COMMIT or
    /// MIMALLOC_ALLOW_THP set them.
    #[test]
    fn option_numbers_name_the_documented_options() {
        if std::env::var_os("MIMALLOC_ALLOW_THP").is_none() {
            assert_eq!(option(ALLOW_THP), 1);
        }
        use_small_pages();
        assert_eq!(option(ALLOW_THP), 0);
        #[cfg(target_os = "linux")]
        // SAFETY: PR_GET_THP_DISABLE only reads the process setting.
        unsafe {
            assert_eq!(libc::prctl(libc::PR_GET_THP_DISABLE, 0, 0, 0, 0), 1);
        }
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
