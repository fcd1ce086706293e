//! A bound on the memory a house template or house check may take while it runs.
//!
//! minijinja's fuel charges most of what a template builds, but not everything: adding
//! two lists is lazy and uncharged until the engine flattens a deep chain of them in one
//! step, so `{% set ns.x = ns.x + ns.x %}` in a loop asks for gigabytes within a single
//! instruction, where no fuel check can stop it. No hook of the engine sees that work,
//! so the bound sits one level lower: the binary installs [`GuardedAllocator`], which
//! counts what the current thread allocates while [`bounded`] is running untrusted code
//! and, past the limit, prints an error naming the house file and stops the process with
//! exit status 2 (the input could not be used). Without the allocator installed (the
//! library in tests), [`bounded`] only runs its closure.

use std::alloc::{GlobalAlloc, Layout};

use crate::block_pool::BlockPool;
use std::cell::{Cell, RefCell};

/// The most a house template or house check may allocate (net) in one evaluation.
pub const HOUSE_MEMORY_LIMIT_BYTES: usize = 96 * 1024 * 1024;

thread_local! {
    /// Bytes the current evaluation may still take; `usize::MAX` when no bound is in force.
    static LEFT: Cell<usize> = const { Cell::new(usize::MAX) };
    /// Set while a bound is in force, so the allocator knows to count.
    static ACTIVE: Cell<bool> = const { Cell::new(false) };
    /// What to name in the message: the file, line and item being evaluated.
    static WHAT: RefCell<String> = const { RefCell::new(String::new()) };
}

/// Runs `f` with the memory it allocates on this thread bounded by `limit_bytes`; `what`
/// names the house file (and line) for the message that stops the run past the bound.
pub fn bounded<T>(what: &str, limit_bytes: usize, f: impl FnOnce() -> T) -> T {
    // Nested calls keep the outer bound.
    if ACTIVE.with(Cell::get) {
        return f();
    }
    WHAT.with(|w| {
        let mut w = w.borrow_mut();
        w.clear();
        w.push_str(what);
    });
    LEFT.with(|l| l.set(limit_bytes));
    ACTIVE.with(|a| a.set(true));
    // Lifts the bound however `f` ends, a panic included.
    struct Lift;
    impl Drop for Lift {
        fn drop(&mut self) {
            let _ = ACTIVE.try_with(|a| a.set(false));
            let _ = LEFT.try_with(|l| l.set(usize::MAX));
        }
    }
    let _lift = Lift;
    f()
}

/// The binary's allocator ([`BlockPool`]: small blocks from a fixed region, the rest from
/// the system), counting allocations made inside [`bounded`].
pub struct GuardedAllocator;

impl GuardedAllocator {
    #[inline]
    fn charge(size: usize) {
        let active = ACTIVE.try_with(Cell::get).unwrap_or(false);
        if !active {
            return;
        }
        let left = LEFT.try_with(Cell::get).unwrap_or(usize::MAX);
        if size <= left {
            let _ = LEFT.try_with(|l| l.set(left - size));
            return;
        }
        Self::past_the_bound()
    }

    /// Reports a house template or check past its memory bound and ends the run. Out of
    /// line: `alloc`, which every allocation of the run goes through, then keeps no stack
    /// frame of its own for this message.
    #[cold]
    #[inline(never)]
    fn past_the_bound() -> ! {
        // Stop counting first, since reporting allocates.
        let _ = ACTIVE.try_with(|a| a.set(false));
        let what = WHAT
            .try_with(|w| w.try_borrow().map(|w| w.clone()).unwrap_or_default())
            .unwrap_or_default();
        eprintln!(
            "error: {what}: used more than {} MB of memory while being evaluated (a list or \
             string that keeps growing, such as one added to itself in a loop?); house \
             templates and house checks are limited to that",
            HOUSE_MEMORY_LIMIT_BYTES / (1024 * 1024)
        );
        std::process::exit(2);
    }

    #[inline]
    fn refund(size: usize) {
        if ACTIVE.try_with(Cell::get).unwrap_or(false) {
            let _ = LEFT.try_with(|l| l.set(l.get().saturating_add(size)));
        }
    }
}

// SAFETY: every call is passed to the block pool unchanged; the counting only
// reads and writes thread-local cells (const-initialised, so touching them allocates
// nothing) and never unwinds.
unsafe impl GlobalAlloc for GuardedAllocator {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        Self::charge(layout.size());
        // SAFETY: the caller's contract is passed on unchanged.
        unsafe { BlockPool.alloc(layout) }
    }

    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        Self::charge(layout.size());
        // SAFETY: as above.
        unsafe { BlockPool.alloc_zeroed(layout) }
    }

    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        Self::refund(layout.size());
        // SAFETY: as above.
        unsafe { BlockPool.dealloc(ptr, layout) }
    }

    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        if new_size > layout.size() {
            Self::charge(new_size - layout.size());
        } else {
            Self::refund(layout.size() - new_size);
        }
        // SAFETY: as above.
        unsafe { BlockPool.realloc(ptr, layout, new_size) }
    }
}
