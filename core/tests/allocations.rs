//! A solve allocates for its output, never per integration step: the
//! number of heap allocations must not grow with the number of steps.

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;

use tussock_core::bench_problems::standard_non_stiff;
use tussock_core::solve;

struct Counting;

// Counted per thread: the test harness's other threads allocate at their
// own times (a global count made this test fail now and then).
thread_local! {
    static ALLOCATIONS: Cell<usize> = const { Cell::new(0) };
}

fn count() {
    let _ = ALLOCATIONS.try_with(|c| c.set(c.get() + 1));
}

fn allocations() -> usize {
    ALLOCATIONS.with(Cell::get)
}

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        count();
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) }
    }
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        count();
        unsafe { System.realloc(ptr, layout, new_size) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

fn allocations_and_steps(rtol: f64) -> (usize, u32) {
    let mut p = standard_non_stiff();
    p.solver.rtol = rtol;
    p.solver.atol = rtol;
    // Two output intervals only, so output allocations are the same.
    p.output_step = 5.0;
    let before = allocations();
    let traj = solve(&p);
    (allocations() - before, traj.stats.accepted_steps)
}

#[test]
fn allocations_do_not_grow_with_steps() {
    let (few_allocs, few_steps) = allocations_and_steps(1e-4);
    let (many_allocs, many_steps) = allocations_and_steps(1e-11);
    assert!(
        many_steps > 10 * few_steps,
        "{few_steps} vs {many_steps} steps"
    );
    assert_eq!(
        few_allocs, many_allocs,
        "{few_steps} steps: {few_allocs} allocations; {many_steps} steps: {many_allocs}"
    );
}
