//! `batch`: find the captures, resolve their settings, analyse them in parallel, write the
//! summary row by row in sorted order as each row is ready, resume, shard, and report on stderr.

use super::Outcome;
use crate::batch::ordered::{Stopped, ordered_map_until};
use crate::batch::sidecar::Layer;
use crate::batch::summary::{self, PastRow, Status, SummaryFormat};
use crate::batch::walk::{self, Discovery, Found};
use crate::batch::{self, Job};
use crate::cli::{BatchArgs, DistributionArg, OverrideArgs, SummaryFormatArg};
use crate::report::html::{BatchRow, Digest, Entry, capture_html};
use indicatif::{ProgressBar, ProgressState, ProgressStyle};
use std::collections::HashMap;
use std::fs::{File, OpenOptions};
use std::io::{BufRead, Write};
use std::io::{Read, Seek, SeekFrom};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// Captures planned but not yet written, per job: bounds memory whatever the folder size, and
/// lets a slow capture hold back only this many finished ones.
const WINDOW_PER_JOB: usize = 32;

/// The command-line layer of settings: the same keys as a sidecar's.
pub fn layer_from(o: &OverrideArgs) -> Layer {
    Layer {
        voltage: o.voltage.clone(),
        current: o.current.clone(),
        neutral: o.neutral.clone(),
        system: o.system.map(|s| s.as_str().to_string()),
        force_channels: o.force_channels.then_some(true),
        secondary: o.secondary.then_some(true),
        rate: o.rate,
        v_scale: o.v_scale,
        i_scale: o.i_scale,
        skew: o.skew,
        from: o.span.from,
        to: o.span.to,
        time_zero: o.span.time_zero.map(|z| z.as_str().to_string()),
        harmonics: o.harmonics,
        pf_threshold: o.pf_threshold,
        declared_voltage: o.declared_voltage,
        expect: o.expect.clone(),
        draws: o.draws,
        seed: o.seed,
        distribution: o.distribution.map(|d| {
            match d {
                DistributionArg::Uniform => "uniform",
                DistributionArg::Normal => "normal",
            }
            .to_string()
        }),
        v_ratio_accuracy: o.v_ratio_accuracy,
        i_ratio_accuracy: o.i_ratio_accuracy,
        phase_error: o.phase_error,
        skew_uncertainty: o.skew_uncertainty,
        clock_ppm: o.clock_ppm,
        harmonic_accuracy: o.harmonic_accuracy,
        adc_bits: o.adc_bits,
        v_full_scale: o.v_full_scale,
        i_full_scale: o.i_full_scale,
        meter: Default::default(),
        bank: Default::default(),
    }
}

/// What one capture gave: a new row, an earlier row kept as it was, or nothing (the file is
/// not a capture); each with the lines its job has to tell ([`Job::announce`]).
enum Outcome1 {
    New(Box<Done>, Vec<String>),
    Kept(PastRow, Option<Box<ReportPart>>, Vec<String>),
    NotACapture(String, Vec<String>),
}

/// A capture's part of the report: its section, its digest and its summary row.
struct ReportPart {
    section: String,
    digest: Digest,
    row: BatchRow,
}

/// A capture analysed in this run, its row already written out as a line by the worker (so the
/// thread that writes the summary only writes).
struct Done {
    /// Its error was told already (a settings error, told once for every capture it stops).
    told: bool,
    file: String,
    status: Status,
    message: String,
    verdict_failed: bool,
    /// The summary line, or why it could not be made.
    line: Result<String, String>,
    took: Duration,
    /// For `--report`: the capture's part of the report, already written.
    report: Option<Box<ReportPart>>,
}

/// The report's capture sections, spooled to a hidden file beside the report while the batch
/// runs; the file is removed when the spool (or what `finish` gives) is dropped.
struct Spool {
    file: std::io::BufWriter<File>,
    path: PathBuf,
}

/// The spool file's folder and its name's start (`.REPORT.`): it ends `PID.sections`.
fn spool_place(report: &Path) -> std::io::Result<(PathBuf, String)> {
    let name = report
        .file_name()
        .ok_or_else(|| std::io::Error::other("the report path names no file"))?;
    let dir = report
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    Ok((dir.to_path_buf(), format!(".{}.", name.to_string_lossy())))
}

/// Removes the spool files of `report` that a run killed outright (no chance to clean up) left
/// behind: those whose process is gone. Gives the files removed. Where the system does not show
/// its processes (no `/proc`), a spool file of another process is left alone.
fn remove_stale_spools(report: &Path) -> Vec<PathBuf> {
    let Ok((dir, start)) = spool_place(report) else {
        return Vec::new();
    };
    let Ok(entries) = std::fs::read_dir(&dir) else {
        return Vec::new();
    };
    let proc_shown = Path::new("/proc/self").exists();
    let mut removed = Vec::new();
    for e in entries.flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        let Some(pid) = name
            .strip_prefix(&start)
            .and_then(|r| r.strip_suffix(".sections"))
            .filter(|p| !p.is_empty() && p.bytes().all(|b| b.is_ascii_digit()))
        else {
            continue;
        };
        let gone = proc_shown && !Path::new("/proc").join(pid).exists();
        if gone && std::fs::remove_file(e.path()).is_ok() {
            removed.push(e.path());
        }
    }
    removed.sort();
    removed
}

impl Spool {
    fn create(report: &Path) -> std::io::Result<Spool> {
        let (dir, start) = spool_place(report)?;
        let path = dir.join(format!("{start}{}.sections", std::process::id()));
        let file = std::io::BufWriter::new(File::create(&path)?);
        interrupt::spool_created(&path);
        Ok(Spool { file, path })
    }

    fn write(&mut self, section: &str) -> std::io::Result<()> {
        self.file.write_all(section.as_bytes())
    }

    /// Flushes the sections to disk and hands over the file's path (still removed on drop).
    fn finish(mut self) -> std::io::Result<SpoolFile> {
        self.file.flush()?;
        let path = std::mem::take(&mut self.path);
        Ok(SpoolFile(path))
    }
}

impl Drop for Spool {
    fn drop(&mut self) {
        if !self.path.as_os_str().is_empty() {
            let _ = std::fs::remove_file(&self.path);
            interrupt::spool_removed(&self.path);
        }
    }
}

/// A finished spool file, removed when dropped.
struct SpoolFile(PathBuf);

impl SpoolFile {
    fn path(&self) -> &Path {
        &self.0
    }
}

impl Drop for SpoolFile {
    fn drop(&mut self) {
        let _ = std::fs::remove_file(&self.0);
        interrupt::spool_removed(&self.0);
    }
}

/// Ctrl-C during a batch. The first press asks the run to wind down: nothing new is started, the
/// captures in hand finish and their rows are written, the spool file is removed, and the run says
/// what was kept and how to resume. A second press stops at once (the summary is valid to its last
/// whole line; the spool file is removed on the way out).
mod interrupt {
    use std::path::{Path, PathBuf};
    use std::sync::atomic::{AtomicBool, AtomicUsize, Ordering};
    use std::sync::{Mutex, Once};

    /// Set by the first Ctrl-C: the batch winds down.
    pub static CANCEL: AtomicBool = AtomicBool::new(false);
    static PRESSES: AtomicUsize = AtomicUsize::new(0);
    /// Spool files to remove if a second Ctrl-C stops the process at once.
    static SPOOLS: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

    /// Installs the handler (once per process) and clears any earlier run's state.
    pub fn arm() {
        static ONCE: Once = Once::new();
        CANCEL.store(false, Ordering::SeqCst);
        PRESSES.store(0, Ordering::SeqCst);
        ONCE.call_once(|| {
            // Another handler already in place (a host program's) leaves Ctrl-C to it.
            let _ = ctrlc::set_handler(|| {
                CANCEL.store(true, Ordering::SeqCst);
                if PRESSES.fetch_add(1, Ordering::SeqCst) == 0 {
                    eprintln!(
                        "\ninterrupted: finishing the captures in hand, then stopping \
                         (Ctrl-C again to stop at once)"
                    );
                } else {
                    for p in SPOOLS.lock().unwrap_or_else(|e| e.into_inner()).iter() {
                        let _ = std::fs::remove_file(p);
                    }
                    eprintln!(
                        "stopped at once: the summary holds the rows written so far; run the \
                         same command with --resume to finish"
                    );
                    std::process::exit(130);
                }
            });
        });
    }

    pub fn spool_created(p: &Path) {
        SPOOLS
            .lock()
            .unwrap_or_else(|e| e.into_inner())
            .push(p.to_path_buf());
    }

    pub fn spool_removed(p: &Path) {
        SPOOLS
            .lock()
            .unwrap_or_else(|e| e.into_inner())
            .retain(|q| q != p);
    }

    pub fn cancelled() -> bool {
        CANCEL.load(Ordering::SeqCst)
    }
}

/// The command to type to finish an interrupted run: this one, with `--resume`.
fn resume_command() -> String {
    let quote = |a: &str| {
        if !a.is_empty()
            && a.bytes()
                .all(|b| b.is_ascii_alphanumeric() || b"-_./=,:@%+".contains(&b))
        {
            a.to_string()
        } else {
            format!("'{}'", a.replace('\'', "'\\''"))
        }
    };
    let mut words = vec!["tracephase".to_string()];
    let args: Vec<String> = std::env::args().skip(1).collect();
    words.extend(args.iter().map(|a| quote(a)));
    if !args.iter().any(|a| a == "--resume") {
        words.push("--resume".into());
    }
    words.join(" ")
}

/// Counts for the end-of-run report.
#[derive(Default)]
struct Tally {
    ok: usize,
    warning: usize,
    error: usize,
    kept: usize,
    verdict_failed: bool,
    slowest: Option<(String, Duration)>,
}

impl Tally {
    fn count(&mut self, status: &str, verdict_failed: bool) {
        match status {
            "ok" => self.ok += 1,
            "warning" => self.warning += 1,
            _ => self.error += 1,
        }
        self.verdict_failed |= verdict_failed;
    }
}

/// Where the summary goes.
enum Sink<'a> {
    File(File),
    Stdout(&'a mut dyn Write),
}

impl Sink<'_> {
    fn line(&mut self, line: &str) -> std::io::Result<()> {
        let w: &mut dyn Write = match self {
            Sink::File(f) => f,
            Sink::Stdout(w) => *w,
        };
        w.write_all(line.as_bytes())?;
        w.flush()
    }
}

fn list_from_stdin() -> Discovery {
    let mut d = Discovery::default();
    for line in std::io::stdin().lock().lines().map_while(Result::ok) {
        let p = line.trim();
        if !p.is_empty() {
            let path = PathBuf::from(p);
            let root = path.parent().unwrap_or(Path::new("")).to_path_buf();
            d.files.push(Found { path, root });
        }
    }
    d
}

/// Runs `batch`.
pub fn run_batch(a: &BatchArgs, out: &mut dyn Write, err: &mut dyn Write) -> Outcome {
    match run(a, out, err) {
        Ok(o) => o,
        Err(e) => {
            let _ = writeln!(err, "error: {e}");
            Outcome::InputErrors
        }
    }
}

fn run(a: &BatchArgs, out: &mut dyn Write, err: &mut dyn Write) -> Result<Outcome, String> {
    let started = Instant::now();
    let plot_options = super::resolve_plot_options(&a.pcc).map_err(|e| e.to_string())?;
    let jobs_n = match a.jobs {
        Some(0) => return Err("--jobs must be at least 1".into()),
        Some(n) => n,
        None => std::thread::available_parallelism().map_or(1, |n| n.get()),
    };
    let format = match a.format {
        SummaryFormatArg::Csv => SummaryFormat::Csv,
        SummaryFormatArg::Json => SummaryFormat::Json,
    };
    crate::batch::sidecar::check_options(&layer_from(&a.overrides))?;
    let mut discovery = if a.roots.len() == 1 && a.roots[0].as_os_str() == "-" {
        list_from_stdin()
    } else {
        walk::discover(&a.roots)
    };
    if let Some(s) = &a.shard {
        let (k, n) = walk::parse_shard(s)?;
        discovery.files = walk::shard(discovery.files, k, n);
    }
    for (p, e) in &discovery.unreadable {
        let _ = writeln!(err, "error: {}: cannot read: {e}", p.display());
    }
    for note in &discovery.notes {
        let _ = writeln!(err, "note: {note}");
    }
    let cli_layer = layer_from(&a.overrides);
    let mut planner = batch::Planner::new(&cli_layer);
    let columns = match format {
        SummaryFormat::Csv => batch::csv_columns(),
        SummaryFormat::Json => Vec::new(),
    };
    let header = match format {
        SummaryFormat::Csv => summary::csv_line(&columns).map_err(|e| e.to_string())?,
        SummaryFormat::Json => String::new(),
    };
    // Every output is checked before any is touched: the report's spool file is made beside the
    // report (so its folder is writable) before the summary is created or truncated.
    if let Some(p) = &a.report {
        for stale in remove_stale_spools(p) {
            let _ = writeln!(
                err,
                "note: removed {}, the spool file of a run that was stopped",
                stale.display()
            );
        }
    }
    interrupt::arm();
    let mut spool = match &a.report {
        Some(p) if std::fs::metadata(p).is_ok_and(|m| !m.is_file()) => {
            return Err(format!(
                "{}: cannot write the report: it is not a plain file (a folder or a device): \
                 give a file name",
                p.display()
            ));
        }
        Some(p) => Some(
            Spool::create(p)
                .map_err(|e| format!("{}: cannot write the report: {e}", p.display()))?,
        ),
        None => None,
    };
    let spool_path = spool.as_ref().map(|s| s.path.clone()).unwrap_or_default();
    let spool_error = |p: &Path, e: std::io::Error| {
        format!("{}: cannot write the report's spool file: {e}", p.display())
    };
    // One run at a time writes a summary: a second one stops here, before it reads or writes it.
    let _lock = match &a.out {
        Some(p) => lock_summary(p)?,
        None => None,
    };
    let past: HashMap<String, PastRow> = match (&a.out, a.resume) {
        (Some(p), true) => {
            summary::check_resumable(p, format, &columns)?;
            drop_partial_line(p).map_err(|e| format!("{}: {e}", p.display()))?;
            summary::read_past(p, format, &columns)
        }
        _ => HashMap::new(),
    };
    let cannot =
        |p: &Path, e: std::io::Error| format!("{}: cannot write the summary: {e}", p.display());
    // Bytes in the summary file so far: new rows' places follow from it.
    let mut written: u64;
    let mut sink = match &a.out {
        Some(p) if !past.is_empty() => {
            let f = OpenOptions::new()
                .append(true)
                .open(p)
                .map_err(|e| cannot(p, e))?;
            written = f.metadata().map_err(|e| cannot(p, e))?.len();
            Sink::File(f)
        }
        Some(p) => {
            let mut f = File::create(p).map_err(|e| cannot(p, e))?;
            f.write_all(header.as_bytes()).map_err(|e| cannot(p, e))?;
            written = header.len() as u64;
            Sink::File(f)
        }
        None => {
            out.write_all(header.as_bytes())
                .map_err(|e| e.to_string())?;
            written = header.len() as u64;
            Sink::Stdout(out)
        }
    };
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(jobs_n)
        .build()
        .map_err(|e| format!("cannot start {jobs_n} worker threads: {e}"))?;
    let progress = ProgressBar::new(discovery.files.len() as u64).with_style(progress_style());
    let mut tally = Tally::default();
    // With --resume the final file is rewritten in sorted order from the rows' places in it
    // (kept rows where the earlier run wrote them, new rows where this run appended them).
    let mut spans: Vec<std::ops::Range<u64>> = Vec::new();
    // With --report each capture's section is written by its worker and spooled to a file beside
    // the report as rows are written; the rest of the report needs only a digest and a summary
    // row of each capture, so memory stays flat here too.
    let keep = a.report.is_some();
    let mut digests: Vec<Digest> = Vec::new();
    let mut report_rows: Vec<BatchRow> = Vec::new();
    // Captures are planned, analysed on the pool and written back in order, each row as soon as
    // it and every row before it are done; at most WINDOW captures are in between.
    // A capture's part of the report, from its row and its analysis.
    let report_part = |anchor: usize, row: &summary::Row, analysis: &Option<batch::Kept>| {
        let entry = match analysis {
            Some((a, x, trend)) => Entry::Analysed {
                analysis: a,
                expectation: x.as_ref(),
                trend: trend.as_ref(),
            },
            None => Entry::Failed {
                file: row.file.clone(),
                message: row.message.clone(),
            },
        };
        Box::new(ReportPart {
            section: capture_html(anchor, &entry, &plot_options),
            digest: Digest::of(anchor, &entry),
            row: BatchRow {
                file: row.file.clone(),
                status: row.status,
                message: row.message.clone(),
                checks: row.checks(),
            },
        })
    };
    let work = |(anchor, job): (usize, Job)| {
        let file = summary::path_text(&job.path);
        if let Some(p) = past.get(&file)
            && p.settings_hash == job.settings_hash
            && batch::content::fingerprint_capture(&job.path)
                .ok()
                .as_deref()
                == Some(p.content_hash.as_str())
        {
            // The row is kept as it was; a report still needs the capture's section, so the
            // capture is read and analysed again for it (same file, same settings: same figures).
            let part = keep.then(|| {
                let (row, analysis) = batch::process_keeping(&job, keep);
                report_part(anchor, &row, &analysis)
            });
            return Outcome1::Kept(p.clone(), part, job.announce);
        }
        let t = Instant::now();
        let (row, analysis) = batch::process_keeping(&job, keep);
        let took = t.elapsed();
        if row.not_a_capture {
            return Outcome1::NotACapture(row.message, job.announce);
        }
        let line = row.line(format, &columns).map_err(|e| e.to_string());
        let report = keep.then(|| report_part(anchor, &row, &analysis));
        Outcome1::New(
            Box::new(Done {
                told: job.setup.is_err(),
                report,
                line,
                file: row.file,
                status: row.status,
                verdict_failed: row.verdict_failed,
                message: row.message,
                took,
            }),
            job.announce,
        )
    };
    let mut not_captures = 0usize;
    let mut rows_new = 0usize;
    let take = |r: Outcome1| -> Result<(), String> {
        progress.inc(1);
        let announce = match &r {
            Outcome1::New(_, a) | Outcome1::Kept(_, _, a) | Outcome1::NotACapture(_, a) => a,
        };
        if !announce.is_empty() {
            progress.suspend(|| {
                for line in announce {
                    let _ = writeln!(err, "{line}");
                }
            });
        }
        match r {
            Outcome1::NotACapture(why, _) => {
                not_captures += 1;
                progress.suspend(|| {
                    let _ = writeln!(err, "note: {why}: skipped, no row");
                });
            }
            Outcome1::Kept(p, part, _) => {
                if let (Some(part), Some(spool)) = (part, spool.as_mut()) {
                    spool
                        .write(&part.section)
                        .map_err(|e| spool_error(&spool_path, e))?;
                    digests.push(part.digest);
                    report_rows.push(part.row);
                }
                tally.kept += 1;
                tally.count(&p.status, p.verdict_failed);
                spans.push(p.span);
            }
            Outcome1::New(done, _) => {
                let row = *done;
                if let (Some(part), Some(spool)) = (row.report, spool.as_mut()) {
                    spool
                        .write(&part.section)
                        .map_err(|e| spool_error(&spool_path, e))?;
                    digests.push(part.digest);
                    report_rows.push(part.row);
                }
                if row.status == Status::Error && !row.told {
                    progress.suspend(|| {
                        let _ = writeln!(err, "error: {}", row.message);
                    });
                }
                tally.count(row.status.as_str(), row.verdict_failed);
                if tally.slowest.as_ref().is_none_or(|(_, t)| row.took > *t) {
                    tally.slowest = Some((row.file.clone(), row.took));
                }
                let line = row.line?;
                sink.line(&line).map_err(|e| match &a.out {
                    Some(p) => cannot(p, e),
                    None => format!("cannot write the summary to standard output: {e}"),
                })?;
                let end = written + line.len() as u64;
                if a.resume {
                    spans.push(written..end);
                }
                written = end;
                rows_new += 1;
            }
        }
        Ok(())
    };
    let window = WINDOW_PER_JOB * jobs_n;
    let mut anchor = 0;
    ordered_map_until(
        &interrupt::CANCEL,
        &pool,
        jobs_n,
        window,
        &discovery.files,
        |f| {
            anchor += 1;
            (anchor, planner.job(f))
        },
        work,
        take,
    )
    .map_err(|stopped| match stopped {
        Stopped::Take(e) => e,
        Stopped::Panicked(i) => format!(
            "{}: internal error while analysing this file (a bug: please report it); the \
             summary holds the files before it",
            discovery.files[i].path.display()
        ),
        Stopped::NoThread(e) => format!(
            "cannot start the batch's threads: {e}; close other programs, or run with fewer \
             --jobs"
        ),
    })?;
    progress.finish_and_clear();
    drop(sink);
    if interrupt::cancelled() {
        // The spool goes; the summary stays as written: with --resume its rows are not put in
        // order now (rows of the earlier run not reached yet would be lost), the next run does.
        drop(spool);
        let reached = tally.ok + tally.warning + tally.error + not_captures;
        let n = discovery.files.len();
        let kept = if tally.kept > 0 {
            format!(" ({} of them kept from the earlier summary)", tally.kept)
        } else {
            String::new()
        };
        let _ = writeln!(
            err,
            "stopped: {reached} of {n} captures done, {} rows written{kept}; {} not analysed",
            rows_new + tally.kept,
            n - reached
        );
        match &a.out {
            Some(p) => {
                let _ = writeln!(
                    err,
                    "the summary {} is complete to its last row; to finish, run: {}",
                    p.display(),
                    resume_command()
                );
            }
            None => {
                let _ = writeln!(
                    err,
                    "the rows went to standard output; to be able to resume a run, give --out FILE"
                );
            }
        }
        if a.report.is_some() {
            let _ = writeln!(
                err,
                "the report was not written (its spool file is removed); the resumed run writes \
                 it with every capture"
            );
        }
        return Ok(Outcome::Interrupted);
    }
    // A pattern that matched no capture is told (in a shard another shard may hold its files)
    let unmatched = if a.shard.is_none() {
        planner.unmatched_patterns()
    } else {
        Vec::new()
    };
    for w in &unmatched {
        let _ = writeln!(err, "warning: {w}");
    }
    if let (Some(p), true) = (&a.out, a.resume) {
        // the same rows as an uninterrupted run, in sorted order, swapped in at once
        let tmp = p.with_extension("tmp-resume");
        let write = || -> std::io::Result<File> {
            let mut from = File::open(p)?;
            // locked before it takes the summary's place, so a run that opens it next waits
            // for this one to end as a run that opened the old file does
            let new = File::create(&tmp)?;
            let _ = new.try_lock();
            let mut f = std::io::BufWriter::new(new);
            f.write_all(header.as_bytes())?;
            let mut line = Vec::new();
            for span in &spans {
                line.resize((span.end - span.start) as usize, 0);
                from.seek(SeekFrom::Start(span.start))?;
                from.read_exact(&mut line)?;
                f.write_all(&line)?;
            }
            let new = f.into_inner().map_err(|e| e.into_error())?;
            new.sync_all()?;
            std::fs::rename(&tmp, p)?;
            Ok(new)
        };
        let _new_lock = write().map_err(|e| cannot(p, e))?;
    }
    if let Some(path) = &a.report {
        let title = format!("tracephase batch: {} captures", digests.len());
        let spool = spool.take().ok_or("the report's spool file is missing")?;
        let sections = spool.finish().map_err(|e| spool_error(&spool_path, e))?;
        let saved = super::html::save_spooled(
            path,
            title,
            &digests,
            report_rows,
            sections.path(),
            &plot_options,
            &unmatched,
        );
        drop(sections);
        saved?;
    }
    let total = started.elapsed().as_secs_f64();
    let n = discovery.files.len() - not_captures;
    let _ = writeln!(
        err,
        "batch: {n} files in {total:.2} s ({:.0} files/s): {} ok, {} warning, {} error{}; {} other files skipped{}{}{}",
        n as f64 / total.max(1e-9),
        tally.ok,
        tally.warning,
        tally.error,
        if tally.kept > 0 {
            format!(" ({} kept from the earlier summary)", tally.kept)
        } else {
            String::new()
        },
        discovery.skipped + not_captures,
        if not_captures > 0 {
            format!(" ({not_captures} of them not captures)")
        } else {
            String::new()
        },
        tally
            .slowest
            .map(|(f, t)| format!("; slowest: {f} ({:.3} s)", t.as_secs_f64()))
            .unwrap_or_default(),
        match unmatched.len() {
            0 => String::new(),
            1 => "; 1 sidecar pattern matched no capture (warning above)".into(),
            k => format!("; {k} sidecar patterns matched no capture (warnings above)"),
        },
    );
    Ok(if tally.error > 0 || !discovery.unreadable.is_empty() {
        Outcome::InputErrors
    } else if tally.verdict_failed {
        Outcome::VerdictFailed
    } else {
        Outcome::Ok
    })
}

/// Takes an exclusive lock on the summary `p` (created empty when missing) and gives the locked
/// file, held for the run; another tracephase run holding it is an error naming the file. A path
/// that is not a plain file (`/dev/stdout`) or a file system without locks goes unlocked.
fn lock_summary(p: &Path) -> Result<Option<File>, String> {
    if std::fs::metadata(p).is_ok_and(|m| !m.is_file()) {
        return Ok(None);
    }
    let in_use = || {
        format!(
            "{}: in use by another tracephase run writing this summary; wait for it to end, or \
             give this run another --out file",
            p.display()
        )
    };
    // A --resume run ending swaps a new file in under the same name: the file locked must be
    // the one the name leads to, else the lock is taken again on the new one.
    for _ in 0..3 {
        let f = OpenOptions::new()
            .read(true)
            .write(true)
            .create(true)
            .truncate(false)
            .open(p)
            .map_err(|e| format!("{}: cannot write the summary: {e}", p.display()))?;
        match f.try_lock() {
            Ok(()) => {}
            Err(std::fs::TryLockError::WouldBlock) => return Err(in_use()),
            Err(std::fs::TryLockError::Error(_)) => return Ok(None),
        }
        if same_file(&f, p) {
            return Ok(Some(f));
        }
    }
    Err(in_use())
}

#[cfg(unix)]
fn same_file(f: &File, p: &Path) -> bool {
    use std::os::unix::fs::MetadataExt;
    match (f.metadata(), std::fs::metadata(p)) {
        (Ok(a), Ok(b)) => a.dev() == b.dev() && a.ino() == b.ino(),
        _ => false,
    }
}

#[cfg(not(unix))]
fn same_file(_: &File, _: &Path) -> bool {
    true
}

/// Cuts a summary back to its last complete line (a run killed mid-write may leave half a row),
/// so rows appended on `--resume` start on a line of their own.
fn drop_partial_line(path: &Path) -> std::io::Result<()> {
    let bytes = match std::fs::read(path) {
        Ok(b) => b,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(()),
        Err(e) => return Err(e),
    };
    let keep = bytes.iter().rposition(|&b| b == b'\n').map_or(0, |p| p + 1);
    if keep < bytes.len() {
        OpenOptions::new()
            .write(true)
            .open(path)?
            .set_len(keep as u64)?;
    }
    Ok(())
}

/// The progress bar's layout (indicatif's template language; two keys of our own).
const PROGRESS_TEMPLATE: &str =
    "{elapsed_precise} [{wide_bar}] {pos}/{len} files, {files_per_s}, {time_left}";

/// The batch progress bar (on stderr, drawn only on a terminal): elapsed time, the bar, files
/// done of all, files per second and the time left at that rate.
fn progress_style() -> ProgressStyle {
    ProgressStyle::with_template(PROGRESS_TEMPLATE)
        .unwrap_or_else(|_| ProgressStyle::default_bar())
        .with_key(
            "files_per_s",
            |s: &ProgressState, w: &mut dyn std::fmt::Write| {
                let _ = write!(w, "{:.1} files/s", s.per_sec());
            },
        )
        .with_key(
            "time_left",
            |s: &ProgressState, w: &mut dyn std::fmt::Write| {
                let left = s.eta().as_secs();
                let _ = if s.pos() == 0 {
                    write!(w, "time left unknown")
                } else if left >= 3600 {
                    write!(w, "{}h {:02}m left", left / 3600, left % 3600 / 60)
                } else {
                    write!(w, "{}m {:02}s left", left / 60, left % 60)
                };
            },
        )
}

#[cfg(test)]
mod progress_tests {
    use super::*;

    #[test]
    fn the_progress_template_is_valid_and_names_its_rate_and_time_left() {
        assert!(ProgressStyle::with_template(PROGRESS_TEMPLATE).is_ok());
        assert!(PROGRESS_TEMPLATE.contains("{files_per_s}"));
        assert!(PROGRESS_TEMPLATE.contains("{time_left}"));
    }
}
