//! Single-row scoring allocates nothing on the heap (p ≤ 64): checked with
//! a counting global allocator that counts allocations made by this thread.

mod common;
use mvdist::drift::ForgettingModel;
use mvdist::{DistanceModel, RowOrigin};
use ndarray::Array2;
use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;

struct Counting;

thread_local! {
    static ALLOCATIONS: Cell<u64> = const { Cell::new(0) };
}

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        ALLOCATIONS.with(|a| a.set(a.get() + 1));
        // SAFETY: forwarded unchanged to the system allocator.
        unsafe { System.alloc(layout) }
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: forwarded unchanged to the system allocator.
        unsafe { System.dealloc(ptr, layout) }
    }
}

#[global_allocator]
static GLOBAL: Counting = Counting;

fn allocations_during(f: impl FnOnce()) -> u64 {
    let before = ALLOCATIONS.with(|a| a.get());
    f();
    ALLOCATIONS.with(|a| a.get()) - before
}

/// Seeded standard-normal rows (a numerical fixture, not a reference).
fn rows(n: usize, p: usize) -> Array2<f64> {
    let mut rng = common::Rng(42);
    Array2::from_shape_fn((n, p), |_| rng.normal())
}

#[test]
fn single_row_scoring_does_not_allocate() {
    for p in [4usize, 16, 64] {
        let x = rows(10 * p, p);
        let model = DistanceModel::fit(x.view()).unwrap();
        let row: Vec<f64> = x.row(3).to_vec();
        let row32: Vec<f32> = row.iter().map(|&v| v as f32).collect();
        // Warm up (run-time CPU feature detection caches its answer).
        model.squared_distance(&row).unwrap();
        let n = allocations_during(|| {
            for _ in 0..1000 {
                std::hint::black_box(model.squared_distance(&row).unwrap());
                std::hint::black_box(model.score_row(&row, RowOrigin::New, 0.01).unwrap());
                std::hint::black_box(model.score_row(&row, RowOrigin::InSample, 0.01).unwrap());
                std::hint::black_box(model.score_row_f32(&row32, RowOrigin::New, 0.01).unwrap());
            }
        });
        assert_eq!(n, 0, "p = {p}: {n} allocations");
        // The prepared scorer's single-row entry points. (Batches write
        // into caller-owned buffers but take per-task kernel scratch.)
        let scorer = mvdist::Scorer::new(model.clone(), RowOrigin::New, 0.01).unwrap();
        let n = allocations_during(|| {
            for _ in 0..1000 {
                std::hint::black_box(scorer.flag_row(&row).unwrap());
                std::hint::black_box(scorer.flag_row_f32(&row32).unwrap());
                std::hint::black_box(scorer.score_row(&row).unwrap());
            }
        });
        assert_eq!(n, 0, "scorer, p = {p}: {n} allocations");
    }
    // Larger p with caller-owned scratch.
    let x = rows(1000, 80);
    let model = DistanceModel::fit(x.view()).unwrap();
    let row = x.row(5).to_vec();
    let mut scratch = vec![0.0; 80];
    model
        .squared_distance_with_scratch(&row, &mut scratch)
        .unwrap();
    let n = allocations_during(|| {
        for _ in 0..100 {
            std::hint::black_box(
                model
                    .squared_distance_with_scratch(&row, &mut scratch)
                    .unwrap(),
            );
        }
    });
    assert_eq!(n, 0);
}

#[test]
fn drifting_model_scoring_and_updates_do_not_allocate() {
    let x = rows(500, 16);
    let mut model = ForgettingModel::new(16, 0.995)
        .unwrap()
        .with_refactor_every(u64::MAX);
    for r in x.outer_iter().take(100) {
        model.update(r.as_slice().unwrap()).unwrap();
    }
    let n = allocations_during(|| {
        for r in x.outer_iter().skip(100) {
            let r = r.as_slice().unwrap();
            std::hint::black_box(model.score_row(r, 0.01).unwrap());
            model.update(r).unwrap();
        }
    });
    assert_eq!(n, 0, "{n} allocations");
}
