//! A counting global allocator for the no-allocation tests
//! (tests/dynamical_alloc.rs, tests/fit_alloc.rs): `count()` is the
//! number of allocations and reallocations made so far by the calling
//! thread (the test harness allocates on its own threads meanwhile; those
//! are not counted). Include with `mod alloc_support;` — it installs
//! itself as the test binary's global allocator.

use std::alloc::{GlobalAlloc, Layout, System as SysAlloc};
use std::cell::Cell;

struct Counting;

thread_local! {
    static ALLOCS: Cell<usize> = const { Cell::new(0) };
}

/// Allocations made by this thread so far.
pub fn count() -> usize {
    ALLOCS.with(|c| c.get())
}

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, l: Layout) -> *mut u8 {
        ALLOCS.with(|c| c.set(c.get() + 1));
        unsafe { SysAlloc.alloc(l) }
    }
    unsafe fn dealloc(&self, p: *mut u8, l: Layout) {
        unsafe { SysAlloc.dealloc(p, l) }
    }
    unsafe fn realloc(&self, p: *mut u8, l: Layout, n: usize) -> *mut u8 {
        ALLOCS.with(|c| c.set(c.get() + 1));
        unsafe { SysAlloc.realloc(p, l, n) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;
