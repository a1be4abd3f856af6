//! The exact engine's unrecorded cycle loop allocates nothing.
//!
//! A counting global allocator (its own test binary, so no other test's
//! allocations interfere) counts heap allocations while the engine runs
//! cycles after warm-up.

use std::alloc::{GlobalAlloc, Layout, System};
use std::sync::atomic::{AtomicU64, Ordering};

struct Counting;
static ALLOCS: AtomicU64 = AtomicU64::new(0);

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        ALLOCS.fetch_add(1, Ordering::Relaxed);
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        ALLOCS.fetch_add(1, Ordering::Relaxed);
        unsafe { System.realloc(ptr, layout, new_size) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

#[test]
fn exact_engine_cycles_allocate_nothing() {
    use sim_core::engine::ExactEngine;
    use sim_core::metrics::Totals;
    for s in chopwave_suite::realistic_set() {
        let mut e = ExactEngine::new(&s);
        for _ in 0..20 {
            e.run_cycle(None, None).unwrap();
        }
        let mut totals = Totals::new();
        let before = ALLOCS.load(Ordering::Relaxed);
        for _ in 0..500 {
            e.run_cycle(None, None).unwrap();
            e.run_cycle(Some(&mut totals), None).unwrap();
        }
        let after = ALLOCS.load(Ordering::Relaxed);
        // The counter itself works: a Vec does allocate.
        let probe: Vec<u8> = Vec::with_capacity(16);
        assert!(
            ALLOCS.load(Ordering::Relaxed) > after,
            "counting allocator inactive"
        );
        drop(probe);
        assert_eq!(
            after - before,
            0,
            "{}: {} allocations in 1000 cycles",
            s.name,
            after - before
        );
    }
}
