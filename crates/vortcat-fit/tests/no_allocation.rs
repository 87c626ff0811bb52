//! The residual and Jacobian evaluation must not allocate (issue requirement). Checked with a
//! counting global allocator: a whole fit over 709 vectors with about ten evaluations must make
//! far fewer heap allocations than one per sample, and the count must not grow with the number
//! of samples (so no allocation sits in the per-sample loop).
// A counting `GlobalAlloc` needs `unsafe impl`; it only forwards to the system allocator.
#![allow(unsafe_code)]

mod common;

use std::alloc::{GlobalAlloc, Layout, System};
use std::sync::atomic::{AtomicUsize, Ordering};

use common::*;
use vortcat_fit::*;

struct Counting;
static COUNT: AtomicUsize = AtomicUsize::new(0);

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, l: Layout) -> *mut u8 {
        COUNT.fetch_add(1, Ordering::Relaxed);
        System.alloc(l)
    }
    unsafe fn dealloc(&self, p: *mut u8, l: Layout) {
        System.dealloc(p, l)
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

fn allocations_of_fit(half: f64) -> (usize, usize, u64) {
    let t = Truth {
        centre: [0.3, -0.2],
        convection: [0.0, 0.0],
        params: vec![1.0, 5.0],
    };
    let s = grid_samples(&LambOseen, &t, 1.0, half, 0.001, None, &mut rng(1));
    let w = window_of(&s, [0.0, 0.0], half, 1.0);
    let settings = FitSettings::default();
    let g = InitialGuess::at([0.0, 0.0]);
    let before = COUNT.load(Ordering::Relaxed);
    let r = fit(&LambOseen, &w, &g, &settings).unwrap();
    let after = COUNT.load(Ordering::Relaxed);
    (after - before, w.len(), r.evaluations)
}

#[test]
fn evaluation_does_not_allocate_per_sample() {
    let (small, n_small, e_small) = allocations_of_fit(15.0);
    let (large, n_large, e_large) = allocations_of_fit(30.0);
    eprintln!("{n_small} vectors: {small} allocations ({e_small} evals); {n_large} vectors: {large} allocations ({e_large} evals)");
    assert!(
        small < n_small / 4,
        "{small} allocations for {n_small} vectors"
    );
    // Four times the samples: allocations may differ by the per-evaluation count only.
    assert!(
        large < small + 5 * (e_large as usize + 1),
        "{large} vs {small}"
    );
}
