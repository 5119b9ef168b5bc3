//! A panic inside a third-party reader (calamine's workbook readers, polars' parquet reader) is a
//! damaged input, not a bug of the run: it is caught here and becomes a message about that one
//! file, while the batch goes on. While a closure runs under `contain`, `active` is true on its
//! thread, so the binary's panic hook can leave such a panic out of its "internal error" note.
//! An allocation failure aborts and cannot be caught; the readers' pre-scans refuse what would
//! allocate past the README's budgets before a reader sees the file.

use std::cell::Cell;
use std::panic::{catch_unwind, AssertUnwindSafe};

thread_local! {
    /// How many `contain` calls are running on this thread.
    static DEPTH: Cell<u32> = const { Cell::new(0) };
}

/// Whether the current thread is inside `contain` (a panic here will be caught).
pub fn active() -> bool {
    DEPTH.with(|d| d.get() > 0)
}

/// A panic was caught (its text is left out: it may quote cell text).
#[derive(Debug, PartialEq, Eq)]
pub struct Panicked;

/// Runs `f`; a panic inside it is caught and returned as `Err(Panicked)`. The caller turns it
/// into a message that names the file.
pub fn contain<T>(f: impl FnOnce() -> T) -> Result<T, Panicked> {
    DEPTH.with(|d| d.set(d.get() + 1));
    // the reader's state is dropped or abandoned after a panic, never used again
    let result = catch_unwind(AssertUnwindSafe(f));
    DEPTH.with(|d| d.set(d.get().saturating_sub(1)));
    result.map_err(|_| Panicked)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_panic_is_caught_and_the_flag_is_set_only_inside() {
        assert!(!active());
        assert_eq!(contain(active), Ok(true));
        let caught = contain(|| -> u8 { panic!("a reader bug") });
        assert_eq!(caught, Err(Panicked));
        assert!(!active());
    }
}
