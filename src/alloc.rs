#![allow(unsafe_code)] // the allocator's options are set through its C interface, before main
//! The binary's memory allocator. A run allocates and frees several small strings for every
//! row (cells, names, feedback sentences, flag notes); mimalloc does that in fewer cycles than
//! glibc's malloc, and with two options set it also holds less memory at its peak. Measured with
//! `bench/run.sh` (figures in DEVELOPERS.md, "Speed"). The library does not choose an allocator.

use std::os::raw::{c_int, c_long};

#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

// Option numbers of mimalloc 3 (`mi_option_e` in the mimalloc.h of libmimalloc-sys 0.1.49, which
// Cargo.toml pins for that reason).
const ARENA_EAGER_COMMIT: c_int = 4;
const PURGE_DELAY: c_int = 15;

extern "C" {
    fn mi_option_set(option: c_int, value: c_long);
    #[cfg(test)]
    fn mi_option_get(option: c_int) -> c_long;
}

/// Commits arena memory only as it is used and returns freed pages at once, instead of after
/// a 10 ms delay: a batch frees a sheet's rows in bursts, and the delay let freed pages pile up
/// (peak 106 MiB against 57 MiB on the 100,000-row bench class). It must run before the first
/// allocation creates an arena, so on Linux it runs as a constructor, before `main`.
extern "C" fn tune() {
    // SAFETY: mi_option_set only stores a value in mimalloc's option table; both numbers are
    // options of the linked mimalloc (its pinned mimalloc.h; the test checks they took effect).
    unsafe {
        mi_option_set(ARENA_EAGER_COMMIT, 0);
        mi_option_set(PURGE_DELAY, 0);
    }
}

#[cfg(target_os = "linux")]
#[used]
#[link_section = ".init_array"]
static TUNE_BEFORE_MAIN: extern "C" fn() = tune;

/// Where constructors do not run this way, as early in `main` as possible.
pub fn tune_late() {
    if !cfg!(target_os = "linux") {
        tune();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn options_are_set_before_main() {
        // The defaults are 2 and 10 ms (mimalloc.h of the pinned libmimalloc-sys 0.1.49); the
        // constructor has set both to 0 by the time a test runs.
        // SAFETY: reading an option only reads mimalloc's option table.
        let (eager, delay) = unsafe {
            (
                mi_option_get(ARENA_EAGER_COMMIT),
                mi_option_get(PURGE_DELAY),
            )
        };
        if cfg!(target_os = "linux") {
            assert_eq!((eager, delay), (0, 0));
        }
    }
}
