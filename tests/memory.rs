//! Memory of a plan, counted by the allocator: the heap a plan holds (its solution and report)
//! grows by at most 2 KB per run. Counted bytes, not time, so the check is exact on any
//! machine. The serialised sheet itself is the caller's and is not counted here.

use clockprep::error::SpecSource;
use std::alloc::{GlobalAlloc, Layout, System};
use std::sync::atomic::{AtomicUsize, Ordering};

struct Counting;

static LIVE: AtomicUsize = AtomicUsize::new(0);
static PEAK: AtomicUsize = AtomicUsize::new(0);

unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        let p = unsafe { System.alloc(layout) };
        if !p.is_null() {
            let now = LIVE.fetch_add(layout.size(), Ordering::Relaxed) + layout.size();
            PEAK.fetch_max(now, Ordering::Relaxed);
        }
        p
    }
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) };
        LIVE.fetch_sub(layout.size(), Ordering::Relaxed);
    }
}

#[global_allocator]
static A: Counting = Counting;

const DEMO: &str = include_str!("../plans/maple-hollow-bromate.toml");

/// The demo with `n` runs cycling through 96 distinct target sets.
fn plan_text(n: usize) -> String {
    let mut s = DEMO[..DEMO.find("[[run]]").unwrap()].to_string();
    for i in 0..n {
        let k = i % 96;
        let iodide = 1.50 + 0.25 * (k % 6) as f64;
        let bromate = 6.0 + 1.0 * (k / 6 % 4) as f64;
        let acid = 15.0 + 2.5 * (k / 24 % 4) as f64;
        s.push_str(&format!(
            "[[run]]\nname = \"run {i}\"\ntargets = {{ \"I-\" = \"{iodide:.2} mM\", \"BrO3-\" = \"{bromate:.2} mM\", \"H+\" = \"{acid:.1} mM\" }}\n\n"
        ));
    }
    s
}

/// (bytes held by the finished report, peak bytes while planning), above what was live before.
fn measure(n: usize) -> (usize, usize) {
    // Counted from before the spec text exists: the plan consumes (and frees) it.
    let before = LIVE.load(Ordering::Relaxed);
    PEAK.store(before, Ordering::Relaxed);
    let text = plan_text(n);
    let report = clockprep::plan(SpecSource::new("m.toml", text)).unwrap();
    let held = LIVE.load(Ordering::Relaxed) - before;
    let peak = PEAK.load(Ordering::Relaxed) - before;
    drop(report);
    (held, peak)
}

#[test]
fn plan_memory_grows_by_at_most_two_kilobytes_per_run() {
    // Tables read once on first use (tolerances, reagents, presets) stay for the process.
    measure(10);
    let (held_small, peak_small) = measure(200);
    let (held_big, peak_big) = measure(4_000);
    let per_run_held = (held_big as f64 - held_small as f64) / 3_800.0;
    let per_run_peak = (peak_big as f64 - peak_small as f64) / 3_800.0;
    eprintln!("held {held_small} / {held_big} B, peak {peak_small} / {peak_big} B: held {per_run_held:.0} B/run, peak {per_run_peak:.0} B/run");
    // The plan a caller keeps: at most 2 KB per run.
    assert!(per_run_held <= 2048.0, "held {per_run_held:.0} B per run");
    // While planning, the parsed spec, the solution and the forecasts of every run are live
    // at once; kept under 4 KB per run so that a regression shows.
    assert!(per_run_peak <= 4096.0, "peak {per_run_peak:.0} B per run");
}
