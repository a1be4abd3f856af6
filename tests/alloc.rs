//! The exact engine's unrecorded cycle loop allocates nothing.
//!
//! A counting global allocator (its own test binary, so no other test's
//! allocations interfere) counts heap allocations while the engine runs
//! cycles after warm-up.

use chopwave_suite::{allocations, CountingAlloc};

#[global_allocator]
static GLOBAL: CountingAlloc = CountingAlloc;

#[test]
fn exact_engine_cycles_allocate_nothing() {
    use sim_core::exact::engine::ExactEngine;
    use sim_core::metrics::Totals;
    for s in chopwave_suite::realistic_set() {
        let mut e = ExactEngine::new(&s);
        for _ in 0..20 {
            e.run_cycle(None, None).unwrap();
        }
        let mut totals = Totals::new();
        let before = allocations();
        for _ in 0..500 {
            e.run_cycle(None, None).unwrap();
            e.run_cycle(Some(&mut totals), None).unwrap();
            // Shooting's cycles: a restart at a turn-on and the Jacobian.
            let x = e.state_array();
            e.restart_at_turn_on(x);
            assert!(e.run_cycle_with_jacobian().unwrap().is_some());
            // A library user's stepping: one cycle event by event.
            while !e.step(f64::INFINITY).unwrap().turned_on {}
        }
        let after = allocations();
        // The counter itself works: a Vec does allocate.
        let probe: Vec<u8> = Vec::with_capacity(16);
        assert!(allocations() > after, "counting allocator inactive");
        drop(probe);
        assert_eq!(
            after - before,
            0,
            "{}: {} allocations in 2000 cycles",
            s.name,
            after - before
        );
    }
}
