//! Memory that may be refused.
//!
//! A machine can refuse memory (a `ulimit -v`, a container's limit, a 32-bit address space). Where
//! the code asks for room it can do without, it asks fallibly, inside [`fallible`], and a refusal
//! is an error naming the file, as any other. Everywhere else Rust's collections call the global
//! allocator infallibly, and a refusal there would abort the process (exit 134, "memory allocation
//! of N bytes failed", no file named, a batch's other files lost). The `tracephase` binary
//! installs [`Guarded`] as its global allocator: a refused request outside a fallible section
//! ends the process with one line naming the files in hand ([`in_hand`]) and exit code 2.
//!
//! Before an analysis asks for its working memory, [`headroom`] asks for the whole of it at once
//! and gives it back, so a capture whose analysis cannot fit is one file's error (a batch goes
//! on) rather than a stop half way.

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;
use std::path::Path;
use std::sync::atomic::{AtomicBool, AtomicU8, AtomicUsize, Ordering};

thread_local! {
    /// Whether this thread's refused allocations go back to the caller.
    static FALLIBLE: Cell<bool> = const { Cell::new(false) };
}

/// Runs `f` with this thread's refused allocations returned to the caller as null, which
/// `try_reserve`, `Vec::try_with_capacity` and a checked `alloc` turn into an error. Keep `f`
/// to the asking itself: an infallible allocation refused inside it aborts.
pub fn fallible<T>(f: impl FnOnce() -> T) -> T {
    struct Restore(bool);
    impl Drop for Restore {
        fn drop(&mut self) {
            FALLIBLE.with(|c| c.set(self.0));
        }
    }
    let _restore = Restore(FALLIBLE.with(|c| c.replace(true)));
    f()
}

/// Makes every thread allocate from one malloc arena (glibc; elsewhere nothing). Each further
/// arena reserves 64 MB of address space when a thread first allocates, so under an address-space
/// limit (`ulimit -v`) the room left depended on how many threads had allocated: a 500 000-row
/// 3-wire capture analysed under limits of 82 to 112 MB and was refused under 160 to 202 MB.
/// With one arena it is refused below 82 MB and analysed from 82 MB up; the 7-column bench
/// file's times are the same either way (DEVELOPERS.md). Call it first thing in `main`.
pub fn one_arena() {
    #[cfg(all(target_os = "linux", target_env = "gnu"))]
    // SAFETY: mallopt only sets a parameter of glibc's allocator; called before other threads.
    unsafe {
        libc::mallopt(libc::M_ARENA_MAX, 1);
    }
}

/// Whether this thread is inside [`fallible`] (for a test's counting allocator, which leaves the
/// probes out of an analysis's peak).
pub fn is_fallible() -> bool {
    FALLIBLE.try_with(Cell::get).unwrap_or(false)
}

/// Room that was asked for and refused.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Refused {
    /// Bytes asked for.
    pub bytes: usize,
}

/// Asks for `bytes` and gives them back: `Err` when the machine refuses them. The room is asked
/// for in pieces of 1 MiB, as an analysis asks for its buffers, so memory the allocator already
/// holds free (a loader's buffers, given back) counts as it will for the analysis; a single
/// request of the whole would need that much fresh address space. The pages are never touched,
/// so the probe costs address space for an instant, not memory.
pub fn headroom(bytes: usize) -> Result<(), Refused> {
    const PIECE: usize = 1 << 20;
    let refused = Refused { bytes };
    let mut pieces: Vec<Vec<u8>> = Vec::new();
    fallible(|| pieces.try_reserve_exact(bytes.div_ceil(PIECE))).map_err(|_| refused)?;
    let mut left = bytes;
    while left > 0 {
        let mut piece: Vec<u8> = Vec::new();
        fallible(|| piece.try_reserve_exact(left.min(PIECE))).map_err(|_| refused)?;
        left -= left.min(PIECE);
        pieces.push(piece);
    }
    Ok(())
}

/// How many files can be named at once in the last words of a refused allocation; more are
/// counted.
const SLOTS: usize = 32;
/// Bytes of a file's name kept (the end of a longer name, after `...`).
const NAME_BYTES: usize = 240;

/// One file in hand: its name's bytes, written once when taken.
struct Slot {
    taken: AtomicBool,
    len: AtomicUsize,
    name: [AtomicU8; NAME_BYTES],
}

impl Slot {
    const fn new() -> Slot {
        Slot {
            taken: AtomicBool::new(false),
            len: AtomicUsize::new(0),
            name: [const { AtomicU8::new(0) }; NAME_BYTES],
        }
    }
}

static IN_HAND: [Slot; SLOTS] = [const { Slot::new() }; SLOTS];
/// Files in hand beyond the slots.
static UNNAMED: AtomicUsize = AtomicUsize::new(0);

/// A file being read or analysed, named by a refused allocation's last words until dropped.
#[must_use = "the file is in hand until this is dropped"]
pub struct InHand(Option<usize>);

/// Marks `path` as in hand until the guard is dropped.
pub fn in_hand(path: &Path) -> InHand {
    let escaped = crate::app::escape::escape_controls(path.as_os_str().as_encoded_bytes());
    let shown = String::from_utf8_lossy(&escaped);
    let mut name = shown.as_bytes();
    let cut = name.len() > NAME_BYTES;
    if cut {
        let mut from = name.len() - (NAME_BYTES - 3);
        while !shown.is_char_boundary(from) {
            from += 1;
        }
        name = &name[from..];
    }
    for (k, slot) in IN_HAND.iter().enumerate() {
        if slot
            .taken
            .compare_exchange(false, true, Ordering::Acquire, Ordering::Relaxed)
            .is_ok()
        {
            let prefix: &[u8] = if cut { b"..." } else { b"" };
            for (cell, &b) in slot.name.iter().zip(prefix.iter().chain(name)) {
                cell.store(b, Ordering::Relaxed);
            }
            slot.len.store(prefix.len() + name.len(), Ordering::Release);
            return InHand(Some(k));
        }
    }
    UNNAMED.fetch_add(1, Ordering::Relaxed);
    InHand(None)
}

impl Drop for InHand {
    fn drop(&mut self) {
        match self.0 {
            Some(k) => {
                IN_HAND[k].len.store(0, Ordering::Relaxed);
                IN_HAND[k].taken.store(false, Ordering::Release);
            }
            None => {
                UNNAMED.fetch_sub(1, Ordering::Relaxed);
            }
        }
    }
}

/// A line built without asking for memory.
struct Line {
    buf: [u8; 4096],
    len: usize,
}

impl Line {
    fn push(&mut self, bytes: &[u8]) {
        let room = self.buf.len() - self.len;
        let n = bytes.len().min(room);
        self.buf[self.len..self.len + n].copy_from_slice(&bytes[..n]);
        self.len += n;
    }

    fn number(&mut self, mut x: usize) {
        let mut digits = [0u8; 20];
        let mut k = digits.len();
        loop {
            k -= 1;
            digits[k] = b'0' + (x % 10) as u8;
            x /= 10;
            if x == 0 {
                break;
            }
        }
        self.push(&digits[k..]);
    }
}

/// The one line a refused allocation of `bytes` ends the process with.
fn last_words(bytes: usize) -> Line {
    let mut line = Line {
        buf: [0; 4096],
        len: 0,
    };
    line.push(b"error: ");
    let mut named = 0;
    for slot in &IN_HAND {
        let len = slot.len.load(Ordering::Acquire);
        if len == 0 {
            continue;
        }
        if named > 0 {
            line.push(b", ");
        }
        for cell in &slot.name[..len.min(NAME_BYTES)] {
            line.push(&[cell.load(Ordering::Relaxed)]);
        }
        named += 1;
    }
    let unnamed = UNNAMED.load(Ordering::Relaxed);
    if unnamed > 0 {
        line.push(if named > 0 { b" and " } else { b"" });
        line.number(unnamed);
        line.push(b" more file(s)");
    }
    if named > 0 || unnamed > 0 {
        line.push(b": ");
    }
    line.push(b"not enough memory to go on: a request for ");
    line.number(bytes.div_ceil(1_000_000));
    line.push(
        b" MB was refused; close other programs, or analyse a shorter span (--from/--to) or \
          split the file\n",
    );
    line
}

/// Ends the process after a refused allocation: one line on standard error, exit code 2.
#[cold]
fn give_up(bytes: usize) -> ! {
    let line = last_words(bytes);
    let text = &line.buf[..line.len];
    #[cfg(unix)]
    // SAFETY: `text` is a valid buffer of `text.len()` bytes; write(2) and _exit(2) ask for no
    // memory and run no destructors, which is what a process out of memory needs.
    unsafe {
        libc::write(2, text.as_ptr().cast(), text.len());
        libc::_exit(2)
    }
    #[cfg(not(unix))]
    {
        use std::io::Write;
        let _ = std::io::stderr().write_all(text);
        std::process::exit(2)
    }
}

/// The `tracephase` binary's global allocator: the system's, with a refused request outside
/// [`fallible`] ending the process with one line naming the files in hand (exit code 2) instead
/// of an abort, and a large block's pages asked for as huge pages ([`advise_huge_pages`]).
pub struct Guarded;

/// Blocks of at least this many bytes get [`advise_huge_pages`]: a capture's columns, its
/// decimated copies and the spectrum's buffers, not the many small ones.
pub const HUGE_PAGE_MIN_BYTES: usize = 4 << 20;

/// Asks Linux to back the 2 MiB-aligned inside of a fresh block of `bytes` at `ptr` with
/// transparent huge pages when it is first written (`madvise(MADV_HUGEPAGE)`; where the machine
/// leaves huge pages to such advice, the common setting, a block is otherwise faulted in
/// 4 KiB at a time). Advice only: nothing is touched or promised, a refusal is ignored, and
/// elsewhere this does nothing. On the end-to-end benchmark's 2-million-row file the run took
/// 10 815 minor page faults before and 4 224 after, and about 12 ms less CPU, 267 -> 254 ms
/// (DEVELOPERS.md).
#[inline]
pub fn advise_huge_pages(ptr: *mut u8, bytes: usize) {
    #[cfg(target_os = "linux")]
    if bytes >= HUGE_PAGE_MIN_BYTES && !ptr.is_null() {
        const HUGE: usize = 2 << 20;
        let start = (ptr as usize).next_multiple_of(HUGE);
        let end = (ptr as usize + bytes) / HUGE * HUGE;
        if end > start {
            // SAFETY: [start, end) lies inside the live block the allocator just gave; the
            // advice changes how its pages are backed, never their contents or the mapping.
            unsafe {
                libc::madvise(start as *mut libc::c_void, end - start, libc::MADV_HUGEPAGE);
            }
        }
    }
    #[cfg(not(target_os = "linux"))]
    let _ = (ptr, bytes);
}

/// A null from the system allocator: returned inside [`fallible`], the end otherwise.
#[inline]
fn refused(bytes: usize) {
    if !is_fallible() {
        give_up(bytes)
    }
}

// SAFETY: every call is forwarded to `System` with the same arguments, so its guarantees hold;
// a null it returns is passed on (fallible sections) or the process ends without returning.
unsafe impl GlobalAlloc for Guarded {
    #[inline]
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        // SAFETY: forwarded as received.
        let p = unsafe { System.alloc(layout) };
        if p.is_null() {
            refused(layout.size());
        }
        advise_huge_pages(p, layout.size());
        p
    }

    #[inline]
    unsafe fn alloc_zeroed(&self, layout: Layout) -> *mut u8 {
        // SAFETY: forwarded as received.
        let p = unsafe { System.alloc_zeroed(layout) };
        if p.is_null() {
            refused(layout.size());
        }
        advise_huge_pages(p, layout.size());
        p
    }

    #[inline]
    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        // SAFETY: forwarded as received.
        unsafe { System.dealloc(ptr, layout) }
    }

    #[inline]
    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        // SAFETY: forwarded as received.
        let p = unsafe { System.realloc(ptr, layout, new_size) };
        if p.is_null() {
            refused(new_size);
        }
        advise_huge_pages(p, new_size);
        p
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn text(bytes: usize) -> String {
        let line = last_words(bytes);
        String::from_utf8(line.buf[..line.len].to_vec()).unwrap()
    }

    /// Rust refuses a request past isize::MAX before the allocator sees it; headroom says so
    /// instead of aborting, and a modest request is granted.
    #[test]
    fn headroom_refuses_what_cannot_be_had_and_grants_the_rest() {
        assert_eq!(
            headroom(usize::MAX / 2 + 1),
            Err(Refused {
                bytes: usize::MAX / 2 + 1
            })
        );
        assert_eq!(headroom(1 << 20), Ok(()));
        assert_eq!(headroom(5 << 20 | 3), Ok(()));
        assert_eq!(headroom(0), Ok(()));
        assert!(!FALLIBLE.with(Cell::get), "the thread is infallible again");
    }

    /// The last words name the files in hand (escaped, a long name cut from the front), the
    /// megabytes, and the ways out; a file let go is no longer named.
    #[test]
    fn last_words_name_the_files_in_hand() {
        let long = format!("{}feeder.csv", "deep/".repeat(80));
        let a = in_hand(Path::new("site/feeder 4\x1b[2J.csv"));
        let b = in_hand(Path::new(&long));
        let t = text(358_400_001);
        assert!(t.starts_with("error: "), "{t}");
        assert!(t.contains("site/feeder 4\\x1b[2J.csv"), "{t}");
        assert!(t.contains(", ..."), "{t}");
        assert!(
            t.contains("deep/feeder.csv: not enough memory to go on"),
            "{t}"
        );
        assert!(t.len() < 240 + 240 + 200, "the long name is cut: {t}");
        assert!(t.contains("a request for 359 MB was refused"), "{t}");
        assert!(t.ends_with("or split the file\n"), "{t}");
        assert_eq!(t.lines().count(), 1);
        drop(a);
        let t = text(1);
        assert!(!t.contains("feeder 4"), "{t}");
        drop(b);
        // other tests of this binary may hold files in hand; this one's are gone
        assert!(!text(1).contains("deep/"));
    }
}
