//! The analysis's working memory against what it asks for: `analysis::working_memory`, the room
//! `analyze` probes for before it starts (src/memory.rs), must cover the peak an analysis reaches
//! beyond its capture (else an analysis can start that the machine cannot finish) and ask for
//! at most half the capture's own size, plus 4 MB, more than the peak (else a capture that fits
//! is refused). The peak varies from run to run with how the phases share the cores (a 4-wire
//! capture's from 8.7 to 19.7 MB), which both bounds leave room for. The peak is counted by this test's
//! own allocator, the probe's pieces left out; single-phase, 4-wire and 3-wire captures at
//! three sample rates. One test: the count is of the whole process.

use std::alloc::{GlobalAlloc, Layout, System};
use std::f64::consts::PI;
use std::io::Write;
use std::path::Path;
use std::sync::atomic::{AtomicUsize, Ordering::SeqCst};

/// The system allocator, counting live bytes and their peak (the probe's pieces counted live
/// but never as a peak).
struct Counting;
static LIVE: AtomicUsize = AtomicUsize::new(0);
static PEAK: AtomicUsize = AtomicUsize::new(0);

fn grew(by: usize) {
    let now = LIVE.fetch_add(by, SeqCst) + by;
    if !tracephase::memory::is_fallible() {
        PEAK.fetch_max(now, SeqCst);
    }
}

// SAFETY: every call is forwarded to `System` unchanged; the counters do not allocate.
unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, l: Layout) -> *mut u8 {
        grew(l.size());
        unsafe { System.alloc(l) }
    }
    unsafe fn alloc_zeroed(&self, l: Layout) -> *mut u8 {
        grew(l.size());
        unsafe { System.alloc_zeroed(l) }
    }
    unsafe fn dealloc(&self, p: *mut u8, l: Layout) {
        LIVE.fetch_sub(l.size(), SeqCst);
        unsafe { System.dealloc(p, l) }
    }
    unsafe fn realloc(&self, p: *mut u8, l: Layout, n: usize) -> *mut u8 {
        if n > l.size() {
            grew(n - l.size());
        } else {
            LIVE.fetch_sub(l.size() - n, SeqCst);
        }
        unsafe { System.realloc(p, l, n) }
    }
}

#[global_allocator]
static COUNTING: Counting = Counting;

/// The values of a row at a time.
type Wave = dyn Fn(f64) -> Vec<f64>;

/// A CSV of `rows` rows at `rate` Hz: a time column, then `f(t)`'s values.
fn write(path: &Path, header: &str, rows: usize, rate: f64, f: &dyn Fn(f64) -> Vec<f64>) {
    let mut w = std::io::BufWriter::new(std::fs::File::create(path).unwrap());
    writeln!(w, "{header}").unwrap();
    for k in 0..rows {
        let t = k as f64 / rate;
        write!(w, "{t:.7}").unwrap();
        for x in f(t) {
            write!(w, ",{x:.4}").unwrap();
        }
        writeln!(w).unwrap();
    }
    w.flush().unwrap();
}

#[test]
fn the_working_memory_asked_for_covers_the_peak_and_not_much_more() {
    let dir = tempfile::TempDir::new().unwrap();
    let w = 2.0 * PI * 50.0;
    // a 50 Hz wave with 5 % third harmonic
    let s = move |a: f64, t: f64, ph: f64| {
        a * (w * t + ph).sin() + 0.05 * a * (3.0 * (w * t + ph)).sin()
    };
    let p = 2.0 * PI / 3.0;
    let single = move |t| vec![s(325.0, t, 0.0), s(14.0, t, -0.5)];
    let four = move |t| {
        vec![
            s(325.0, t, 0.0),
            s(325.0, t, -p),
            s(325.0, t, p),
            s(14.0, t, -0.5),
            s(14.0, t, -0.5 - p),
            s(14.0, t, -0.5 + p),
        ]
    };
    let three = move |t| {
        vec![
            s(563.0, t, PI / 6.0),
            s(563.0, t, PI / 6.0 + p - PI),
            s(14.0, t, -0.5),
            s(14.0, t, -0.5 + p),
        ]
    };
    let cases: [(&str, &str, &Wave); 3] = [
        ("single", "time,V,I", &single),
        ("4-wire", "time,Va,Vb,Vc,Ia,Ib,Ic", &four),
        ("3-wire", "time,Vab,Vcb,Ia,Ic", &three),
    ];
    let mut seen = Vec::new();
    let mut ok = true;
    for (rows, rate) in [(200_000, 10_000.0), (1_000_000, 100_000.0), (400_000, 1e6)] {
        for (name, header, f) in cases {
            let path = dir.path().join(format!("{name}-{rows}.csv"));
            write(&path, header, rows, rate, f);
            let capture = tracephase::capture::load(&path, &Default::default()).unwrap();
            let asked = tracephase::analysis::working_memory(&capture);
            let held: usize = capture
                .voltages
                .iter()
                .chain(&capture.currents)
                .map(|t| t.samples.len() * 8)
                .sum();
            let base = LIVE.load(SeqCst);
            PEAK.store(base, SeqCst);
            let a = tracephase::analyze(capture, &Default::default()).unwrap();
            let peak = PEAK.load(SeqCst).saturating_sub(base);
            drop(a);
            let over = asked as f64 - peak as f64;
            let limit = held as f64 / 2.0 + 4e6;
            seen.push(format!(
                "{name} {rows} rows at {rate} Hz: capture {held} B, peak {peak} B, asked {asked} B \
                 (over by {over:.0} B, at most {limit:.0})"
            ));
            ok &= (0.0..=limit).contains(&over);
            eprintln!("{}", seen.last().unwrap());
        }
    }
    assert!(
        ok,
        "working_memory must cover the peak, and not by more than the limit:\n{}",
        seen.join("\n")
    );
}
