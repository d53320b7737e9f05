//! The fast reader: the data region is cut at line ends into one part per core; each part is read
//! in blocks, each block's lines walked cell by cell straight into that part's share of the
//! pre-sized columns. A line whose cells are all plain decimals is read eight bytes at a time
//! ([`super::digits`]), its end found by its last cell; any other line is found with `memchr`
//! and its cells parsed with [`super::decimal`], `fast_float2` or [`parse_f64`]: the same values
//! either way. It vouches only for plain rows: whatever else it meets makes it give up, and the
//! caller reads the region again with the `csv` crate.

use super::{
    Columns, Layout, MAX_COLUMNS, RowSpec, TimeCheck, Tuning, decimal, digits, estimated_rows,
    parse_f64,
};
use crate::capture::error::LoadErrorKind;
use crate::capture::room::{reserve, zeroed_column};
use memchr::{memchr, memchr_iter, memchr2, memrchr};
use rayon::prelude::*;
use std::fs::File;
use std::io::{ErrorKind, Read, Seek, SeekFrom};
use std::path::Path;
use std::sync::atomic::{AtomicBool, Ordering};

/// Slots for the cells of a row, one for every value of the `u8` that names a used column
/// (at most [`MAX_COLUMNS`] + 1 are used).
const CELL_SLOTS: usize = 256;

/// A part met something only the reference reader handles (or could not be read).
#[derive(Debug)]
struct GiveUp;

/// One part's share of the columns, and what it found.
struct Out<'a> {
    /// This part's share of each wanted column.
    cols: Vec<&'a mut [f64]>,
    /// Rows written into `cols`.
    n: usize,
    /// Rows beyond the pre-sized share, per column.
    spills: Vec<Vec<f64>>,
    time: TimeCheck,
}

/// What a finished part hands back.
struct Part {
    n: usize,
    spills: Vec<Vec<f64>>,
    time: TimeCheck,
}

impl Out<'_> {
    #[inline(always)]
    fn push(&mut self, t: f64, row: &[f64], timed: bool) -> Result<(), GiveUp> {
        if timed {
            self.time.push(t).map_err(|_| GiveUp)?;
        }
        if self.n < self.cols.first().map_or(0, |c| c.len()) {
            for (col, &x) in self.cols.iter_mut().zip(row) {
                col[self.n] = x;
            }
            self.n += 1;
        } else {
            for (spill, &x) in self.spills.iter_mut().zip(row) {
                // no room to be had: the reference reader tries, and says so if it fails too
                if spill.len() == spill.capacity() {
                    let more = spill.len() / 2 + 1024;
                    crate::memory::fallible(|| spill.try_reserve(more)).map_err(|_| GiveUp)?;
                }
                spill.push(x);
            }
        }
        Ok(())
    }

    /// [`Out::push`] of the cells `pick` names, straight from where the row's cells were
    /// stored (no copy of the row first).
    #[inline(always)]
    fn push_picked(&mut self, cells: &[f64; CELL_SLOTS], spec: &RowSpec) -> Result<(), GiveUp> {
        let n = self.n;
        if n >= self.cols.first().map_or(0, |c| c.len()) {
            // past this part's share: through the spill buffers
            let mut row = [0.0; MAX_COLUMNS];
            for (slot, &k) in row.iter_mut().zip(&spec.pick) {
                *slot = cells[usize::from(k)];
            }
            let t = spec.pick_time.map_or(0.0, |k| cells[usize::from(k)]);
            return self.push(t, &row[..spec.pick.len()], spec.time_col.is_some());
        }
        if spec.time_col.is_some() {
            let t = spec.pick_time.map_or(0.0, |k| cells[usize::from(k)]);
            self.time.push(t).map_err(|_| GiveUp)?;
        }
        for (col, &k) in self.cols.iter_mut().zip(&spec.pick) {
            col[n] = cells[usize::from(k)];
        }
        self.n = n + 1;
        Ok(())
    }

    fn finish(self) -> Part {
        Part {
            n: self.n,
            spills: self.spills,
            time: self.time,
        }
    }
}

/// Reads the data region from `data_start` to the end of the file; `None` when the reference
/// reader must do it (see the module note), an error when the memory for the columns cannot be
/// had. `file` is only used to find the cut points.
pub(super) fn read(
    file: &mut File,
    path: &Path,
    data_start: u64,
    file_len: u64,
    spec: &RowSpec,
    layout: &Layout,
    tuning: Tuning,
) -> Result<Option<Columns>, LoadErrorKind> {
    if spec.time_base_ns.is_some() {
        return Ok(None); // date-time stamps: the reference reader parses them
    }
    let region = file_len.saturating_sub(data_start);
    let parts = (region / tuning.min_part_bytes.max(1)).clamp(1, tuning.max_parts.max(1) as u64);
    let Ok(bounds) = cut(file, data_start, file_len, parts as usize) else {
        return Ok(None);
    };
    let caps: Vec<usize> = bounds
        .windows(2)
        .map(|w| estimated_rows(w[1] - w[0], layout))
        .collect();
    let total: usize = caps.iter().sum();
    // Zeroed (calloc'd) columns: pages a part never writes are never touched.
    let width = spec.cols.len();
    let mut columns: Vec<Vec<f64>> = Vec::with_capacity(width);
    for _ in 0..width {
        columns.push(zeroed_column(total, width)?);
    }
    let cancel = AtomicBool::new(false);
    let block = tuning.block_bytes.max(1);
    // each part's read buffer, asked for here so that a refusal is this file's error
    let mut buffers = Vec::with_capacity(caps.len());
    for _ in 0..caps.len() {
        let mut buf: Vec<u8> = Vec::new();
        crate::memory::fallible(|| buf.try_reserve_exact(block)).map_err(|_| {
            LoadErrorKind::OutOfMemory {
                bytes: block as u64,
                rows: total as u64,
                columns: width,
            }
        })?;
        buf.resize(block, 0);
        buffers.push(buf);
    }
    let results: Vec<Result<Part, GiveUp>> = {
        // shares[c][k]: part k's share of column c, turned into one `Out` per part
        let mut shares: Vec<std::vec::IntoIter<&mut [f64]>> = columns
            .iter_mut()
            .map(|c| carve(c, &caps).into_iter())
            .collect();
        let outs = (0..caps.len()).map(|_| Out {
            cols: shares.iter_mut().filter_map(Iterator::next).collect(),
            n: 0,
            spills: vec![Vec::new(); width],
            time: TimeCheck::default(),
        });
        let last = caps.len() - 1;
        let jobs: Vec<_> = outs
            .zip(buffers)
            .enumerate()
            .map(|(k, (out, buf))| {
                // The last part reads on to the end of the file, as the reference reader does.
                let limit = (k < last).then(|| bounds[k + 1] - bounds[k]);
                (bounds[k], limit, out, buf)
            })
            .collect();
        let run = |(start, limit, mut out, buf): (u64, Option<u64>, Out<'_>, Vec<u8>)| {
            let r = read_part(path, start, limit, spec, buf, &mut out, &cancel);
            if r.is_err() {
                cancel.store(true, Ordering::Relaxed);
            }
            r.map(|()| out.finish())
        };
        std::thread::scope(|s| {
            let mut jobs = jobs.into_iter();
            let first = jobs.next();
            let spawned: Vec<_> = jobs
                .map(|job| std::thread::Builder::new().spawn_scoped(s, || run(job)))
                .collect();
            let mut results = Vec::with_capacity(caps.len());
            results.extend(first.map(run));
            for h in spawned {
                results.push(match h {
                    Ok(h) => match h.join() {
                        Ok(r) => r,
                        Err(panic) => std::panic::resume_unwind(panic),
                    },
                    // No thread to be had: let the reference reader do it all.
                    Err(_) => {
                        cancel.store(true, Ordering::Relaxed);
                        Err(GiveUp)
                    }
                });
            }
            results
        })
    };
    let Ok(parts) = results.into_iter().collect::<Result<Vec<Part>, _>>() else {
        return Ok(None);
    };
    let mut time = TimeCheck::default();
    for p in &parts {
        if time.append(&p.time).is_err() {
            return Ok(None);
        }
    }
    let used: Vec<usize> = parts.iter().map(|p| p.n).collect();
    let mut spills: Vec<Vec<Vec<f64>>> = vec![Vec::with_capacity(parts.len()); width];
    for p in parts {
        for (c, s) in p.spills.into_iter().enumerate() {
            spills[c].push(s);
        }
    }
    // each column closed up on its own, side by side (two cores when free)
    let data = columns
        .into_par_iter()
        .zip(spills)
        .map(|(col, spill)| assemble(col, &caps, &used, spill, width))
        .collect::<Result<_, _>>()?;
    Ok(Some(Columns { data, time }))
}

/// Start offsets of up to `parts` parts of `start..end`, each just after a newline, followed
/// by `end`.
fn cut(file: &mut File, start: u64, end: u64, parts: usize) -> std::io::Result<Vec<u64>> {
    let end = end.max(start);
    let len = end - start;
    let mut bounds = vec![start];
    let mut buf = [0u8; 4096];
    for k in 1..parts {
        let guess = start + (u128::from(len) * k as u128 / parts as u128) as u64;
        if bounds.last().is_some_and(|&b| guess <= b) {
            continue;
        }
        match next_line_start(file, guess, end, &mut buf)? {
            Some(b) if b < end => bounds.push(b),
            _ => break,
        }
    }
    bounds.push(end);
    Ok(bounds)
}

/// Offset just after the first newline at or after `from`, if one comes before `end`.
fn next_line_start(
    file: &mut File,
    from: u64,
    end: u64,
    buf: &mut [u8],
) -> std::io::Result<Option<u64>> {
    file.seek(SeekFrom::Start(from))?;
    let mut pos = from;
    while pos < end {
        let n = match file.read(buf) {
            Ok(0) => return Ok(None),
            Ok(n) => n,
            Err(e) if e.kind() == ErrorKind::Interrupted => continue,
            Err(e) => return Err(e),
        };
        if let Some(k) = memchr(b'\n', &buf[..n]) {
            return Ok(Some(pos + k as u64 + 1));
        }
        pos += n as u64;
    }
    Ok(None)
}

/// Splits `col` into consecutive slices of the given sizes.
fn carve<'a>(mut col: &'a mut [f64], sizes: &[usize]) -> Vec<&'a mut [f64]> {
    let mut out = Vec::with_capacity(sizes.len());
    for &n in sizes {
        // the length before the slice is taken out of `col` (taken first, `col.len()` was 0:
        // every share came out empty and every row went through the spill buffers)
        let n = n.min(col.len());
        let (a, b) = std::mem::take(&mut col).split_at_mut(n);
        out.push(a);
        col = b;
    }
    out
}

/// Closes the gaps between the parts' shares (and adds what spilled over), in file order.
fn assemble(
    mut col: Vec<f64>,
    caps: &[usize],
    used: &[usize],
    spills: Vec<Vec<f64>>,
    width: usize,
) -> Result<Vec<f64>, LoadErrorKind> {
    let last = spills.len().saturating_sub(1);
    if spills[..last].iter().any(|s| !s.is_empty()) {
        // A part held more rows than estimated (rare): build the column afresh.
        let total = used.iter().sum::<usize>() + spills.iter().map(Vec::len).sum::<usize>();
        let mut whole = Vec::new();
        reserve(&mut whole, total, width)?;
        let mut at = 0;
        for ((&cap, &n), spill) in caps.iter().zip(used).zip(&spills) {
            whole.extend_from_slice(&col[at..at + n]);
            whole.extend_from_slice(spill);
            at += cap;
        }
        return Ok(whole);
    }
    let (mut at, mut w) = (0, 0);
    for (&cap, &n) in caps.iter().zip(used) {
        col.copy_within(at..at + n, w);
        w += n;
        at += cap;
    }
    col.truncate(w);
    if let Some(spill) = spills.last() {
        reserve(&mut col, spill.len(), width)?;
        col.extend_from_slice(spill);
    }
    Ok(col)
}

/// Reads one part (`limit` bytes from `start`, or to the end of the file) into `out`, in blocks
/// the size of `buf` (doubled for a longer line).
fn read_part(
    path: &Path,
    start: u64,
    limit: Option<u64>,
    spec: &RowSpec,
    mut buf: Vec<u8>,
    out: &mut Out<'_>,
    cancel: &AtomicBool,
) -> Result<(), GiveUp> {
    let mut file = File::open(path).map_err(|_| GiveUp)?;
    file.seek(SeekFrom::Start(start)).map_err(|_| GiveUp)?;
    let mut src = file.take(limit.unwrap_or(u64::MAX));
    let mut filled = 0;
    loop {
        if cancel.load(Ordering::Relaxed) {
            return Err(GiveUp);
        }
        if filled == buf.len() {
            buf.resize(buf.len() * 2, 0); // a line longer than the block
        }
        let got = match src.read(&mut buf[filled..]) {
            Ok(n) => n,
            Err(e) if e.kind() == ErrorKind::Interrupted => continue,
            Err(_) => return Err(GiveUp),
        };
        let before = filled;
        filled += got;
        let upto = if got == 0 {
            filled
        } else {
            // Only the new bytes can hold a newline: the carried-over tail has none.
            match memrchr(b'\n', &buf[before..filled]) {
                Some(k) => before + k + 1,
                None => continue,
            }
        };
        let chunk = &buf[..upto];
        if memchr(b'"', chunk).is_some() {
            return Err(GiveUp); // quoted fields
        }
        if memchr(b'\r', chunk).is_some() {
            let mut line_start = 0;
            for nl in memchr_iter(b'\n', chunk) {
                row(&chunk[line_start..nl], true, spec, out)?;
                line_start = nl + 1;
            }
            if line_start < chunk.len() {
                row(&chunk[line_start..], true, spec, out)?;
            }
        } else {
            lines(chunk, spec, out)?;
        }
        buf.copy_within(upto..filled, 0);
        filled -= upto;
        if got == 0 {
            return Ok(());
        }
    }
}

/// The lines of `chunk` (which holds no CR), each read by [`quick_row`] when it can be and by
/// [`row`] otherwise: the same values either way, with no search for each line's end first.
fn lines(chunk: &[u8], spec: &RowSpec, out: &mut Out<'_>) -> Result<(), GiveUp> {
    // indexed by a `u8`: no bounds check where a cell is stored or picked
    let mut cells = [0.0; CELL_SLOTS];
    let mut at = 0;
    while at < chunk.len() {
        match quick_row(chunk, at, spec, &mut cells) {
            Some(next) => {
                out.push_picked(&cells, spec)?;
                at = next;
            }
            None => {
                let end = memchr(b'\n', &chunk[at..]).map_or(chunk.len(), |k| at + k);
                row(&chunk[at..end], false, spec, out)?;
                at = end + 1;
            }
        }
    }
    Ok(())
}

/// The line that starts at `chunk[at]` when every cell it needs is a plain decimal (see
/// [`digits`]) ended by the delimiter, the last one by the line's end: its cells written into
/// `cells` (as [`values`] does), and the start of the next line. `None` for any other line.
#[inline]
fn quick_row(
    chunk: &[u8],
    mut at: usize,
    spec: &RowSpec,
    cells: &mut [f64; CELL_SLOTS],
) -> Option<usize> {
    let delimiter = spec.delimiter;
    let last = spec.plan.len().checked_sub(1)?;
    for (i, &step) in spec.plan.iter().enumerate() {
        let end = match step {
            None => {
                let rest = chunk.get(at..)?;
                at + memchr2(delimiter, b'\n', rest).unwrap_or(rest.len())
            }
            Some(k) => {
                let (x, end) = digits::plain_decimal(chunk, at)?;
                cells[usize::from(k)] = x;
                end
            }
        };
        match chunk.get(end) {
            Some(&b) if b == delimiter => at = end + 1,
            Some(b'\n') if i == last => return Some(end + 1),
            None if i == last => return Some(end),
            _ => return None,
        }
    }
    // the line goes on past the fields needed: the rest of it is not read
    Some(memchr(b'\n', &chunk[at..]).map_or(chunk.len(), |k| at + k + 1))
}

/// One line, without its `\n`.
#[inline]
fn row(line: &[u8], has_cr: bool, spec: &RowSpec, out: &mut Out<'_>) -> Result<(), GiveUp> {
    let line = if has_cr {
        let l = line.strip_suffix(b"\r").unwrap_or(line);
        if memchr(b'\r', l).is_some() {
            return Err(GiveUp); // a lone CR ends a record for the csv crate
        }
        l
    } else {
        line
    };
    if line.is_empty() {
        return Ok(());
    }
    let mut row = [0.0; MAX_COLUMNS];
    match values(line, spec, &mut row) {
        Some(t) => out.push(t, &row[..spec.pick.len()], spec.time_col.is_some()),
        // A line of spaces: one blank field, skipped like the reference reader does.
        None if memchr(spec.delimiter, line).is_none() && line.trim_ascii().is_empty() => Ok(()),
        None => Err(GiveUp),
    }
}

/// The time of a row (0 without a time column), its wanted cells written into `row` in the
/// order asked for; `None` when a cell is missing, not a number or not finite.
#[inline]
fn values(line: &[u8], spec: &RowSpec, row: &mut [f64; MAX_COLUMNS]) -> Option<f64> {
    let mut cells = [0.0; MAX_COLUMNS + 1];
    let mut p = 0;
    for &step in &spec.plan {
        let rest = line.get(p..)?; // past the end: too few fields
        match step {
            None => p += memchr(spec.delimiter, rest).unwrap_or(rest.len()) + 1,
            Some(k) => {
                let (x, used) = cell(rest, spec.delimiter, spec.decimal_comma)?;
                if !x.is_finite() {
                    return None;
                }
                *cells.get_mut(usize::from(k))? = x;
                p += used + 1;
            }
        }
    }
    for (slot, &k) in row.iter_mut().zip(&spec.pick) {
        *slot = cells[usize::from(k)];
    }
    Some(spec.pick_time.map_or(0.0, |k| cells[usize::from(k)]))
}

/// The number at the start of `rest` and the length of its cell. A cell that is exactly a
/// number is taken as parsed; any other (spaces, decimal comma, junk) goes through
/// [`parse_f64`], so both give the same value.
#[inline]
fn cell(rest: &[u8], delimiter: u8, decimal_comma: bool) -> Option<(f64, usize)> {
    let quick = decimal(rest).or_else(|| fast_float2::parse_partial::<f64, _>(rest).ok());
    if let Some((x, n)) = quick
        && rest.get(n).is_none_or(|&b| b == delimiter)
    {
        return Some((x, n));
    }
    let end = memchr(delimiter, rest).unwrap_or(rest.len());
    parse_f64(&rest[..end], decimal_comma).map(|x| (x, end))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Each part gets its share of the column, in order: once every share came out empty.
    #[test]
    fn carve_gives_each_part_its_share() {
        let mut col: Vec<f64> = (0..10).map(f64::from).collect();
        let shares = carve(&mut col, &[4, 3, 5]);
        let lens: Vec<usize> = shares.iter().map(|s| s.len()).collect();
        assert_eq!(lens, [4, 3, 3], "the last share is what is left");
        assert_eq!((shares[1][0], shares[2][0]), (4.0, 7.0));
    }
}
