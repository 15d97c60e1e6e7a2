//! Memory held by the current thread, counted by a global allocator, so
//! that a run can bound what its script holds whatever form it takes
//! (strings, arrays, maps, closures, signals): Rhai's own size limits see
//! one value at a time, not their sum.
//!
//! [`CountingAllocator`] passes every request to the system allocator and
//! adds the size to a counter of the thread that made it (a free subtracts
//! from the thread that frees). A run reads [`live_bytes`] on its own thread
//! at its start and at each script operation; only differences matter.
//! The `yawdyn` binary installs it; a program that does not (e.g. a unit
//! test) gets 0 from [`live_bytes`] and no script memory budget.

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;

thread_local! {
    /// Bytes allocated minus bytes freed by this thread (const-initialised
    /// and without destructor, so reading it never allocates).
    static LIVE: Cell<isize> = const { Cell::new(0) };
}

/// Adds `delta` bytes to the current thread's count (nothing during thread
/// teardown, when the counter may be gone).
fn add(delta: isize) {
    let _ = LIVE.try_with(|c| c.set(c.get().wrapping_add(delta)));
}

/// Bytes allocated minus bytes freed by the current thread so far (0 when
/// [`CountingAllocator`] is not the global allocator).
pub fn live_bytes() -> isize {
    LIVE.try_with(Cell::get).unwrap_or(0)
}

/// The system allocator, counting bytes per thread (see the module doc).
///
/// ```ignore
/// #[global_allocator]
/// static ALLOCATOR: yawdyn::script::CountingAllocator = yawdyn::script::CountingAllocator;
/// ```
#[derive(Debug, Default, Clone, Copy)]
pub struct CountingAllocator;

// SAFETY: every method forwards to `System` with the caller's arguments
// unchanged and only updates a thread-local counter besides.
unsafe impl GlobalAlloc for CountingAllocator {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        // SAFETY: forwarded unchanged (the caller upholds `alloc`'s contract).
        let p = unsafe { System.alloc(layout) };
        if !p.is_null() {
            add(layout.size() as isize);
        }
        p
    }

    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        // SAFETY: forwarded unchanged.
        let p = unsafe { System.alloc_zeroed(layout) };
        if !p.is_null() {
            add(layout.size() as isize);
        }
        p
    }

    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: forwarded unchanged; `ptr` came from this allocator, i.e. `System`.
        unsafe { System.dealloc(ptr, layout) };
        add(-(layout.size() as isize));
    }

    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        // SAFETY: forwarded unchanged; `ptr` came from `System`.
        let p = unsafe { System.realloc(ptr, layout, new_size) };
        if !p.is_null() {
            add(new_size as isize - layout.size() as isize);
        }
        p
    }
}
