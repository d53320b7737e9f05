//! Batch: whole folders of captures from a site visit, one summary row per capture.
//!
//! Input: the captures found by [`walk`], the settings layers of [`sidecar`] files and the command
//! line. Output: [`summary::Row`]s, one per capture, each made by [`process`] independently of the
//! others (so they can run in parallel and in any order) and written in sorted order.
//!
//! - [`plan`] resolves every capture's settings once, sequentially: sidecars and circuit models
//!   are read once and shared.
//! - [`process`] loads, analyses and checks one capture; whatever goes wrong becomes an `error`
//!   row naming the file, never a stop.

pub mod content;
pub mod ordered;
pub mod sidecar;
pub mod summary;
pub mod walk;

use crate::analysis::{self, Settings};
use crate::capture::{self, ChannelSel, LoadOptions, SpanRequest, TimeZero};
use crate::check::bank::{self, BankReport, BankVerdict, KeyNames, Nameplate, NameplateFile};
use crate::check::circuit::Circuit;
use crate::check::expected::Expectation;
use crate::check::meter::{self, AccuracyClass, MeterVerdict, PfSign, Reading};
use crate::check::tolerance::{Distribution, MAX_DRAWS, MonteCarloConfig};
use crate::quantity::uncertainty::{Adc, UncertaintyInputs};
use crate::report::plot::trend::{MIN_WINDOWS, TrendResult};
use crate::report::wire::AnalysisRecord;
use crate::warning::Severity;
use serde_json::Value;
use sidecar::{Layer, SIDECAR, Sidecar};
use std::collections::{HashMap, HashSet};
use std::io::Read;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use summary::{Row, Status};
use walk::Found;

/// A meter reading to check a capture against.
#[derive(Debug, Clone)]
pub struct MeterSpec {
    /// The reading.
    pub reading: Reading,
    /// The class.
    pub class: AccuracyClass,
    /// The PF sign convention.
    pub pf_sign: PfSign,
    /// The rated current, A, when known.
    pub rated_current: Option<f64>,
    /// The connection, when known.
    pub connection: Option<meter::Connection>,
    /// The reactive class, when named.
    pub reactive_class: Option<AccuracyClass>,
}

impl MeterSpec {
    /// The meter this spec describes.
    pub fn meter(&self) -> meter::Meter {
        meter::Meter {
            rated_current_a: self.rated_current,
            connection: self.connection,
            reactive_class: self.reactive_class,
            ..meter::Meter::new(self.class, self.pf_sign)
        }
    }
}

/// A capacitor bank check: the capture is the bank switched in, `before` the one with it out.
#[derive(Debug, Clone)]
pub struct BankSpec {
    /// The bank.
    pub nameplate: Nameplate,
    /// The capture with the bank switched out.
    pub before: PathBuf,
}

/// Everything needed to process one capture.
#[derive(Debug, Clone)]
pub struct Setup {
    /// Loader options.
    pub load: LoadOptions,
    /// Analysis settings.
    pub settings: Settings,
    /// Circuit model to compare with.
    pub expect: Option<Arc<Circuit>>,
    /// Monte Carlo settings for the model.
    pub monte_carlo: MonteCarloConfig,
    /// Meter reading to check.
    pub meter: Option<MeterSpec>,
    /// Capacitor bank check.
    pub bank: Option<BankSpec>,
}

/// One capture with its resolved settings.
#[derive(Debug, Clone)]
pub struct Job {
    /// The capture.
    pub path: PathBuf,
    /// Its settings, or why they could not be resolved (a bad sidecar, a bad model...).
    pub setup: Result<Setup, String>,
    /// The settings used, as compact JSON (recorded in its row).
    pub settings_json: String,
    /// Fingerprint of the settings.
    pub settings_hash: String,
    /// Lines to tell when this capture's row is written (`note: ...`, `error: ...`): a
    /// sidecar's note on old key names and a settings error, each told with the first capture
    /// it concerns and never again. A settings error of this job's own is among them, or was
    /// told before, so its row needs no line of its own.
    pub announce: Vec<String>,
}

/// Resolves the settings of every capture: sidecars from the root down, then `cli`.
pub fn plan(found: &[Found], cli: &Layer) -> Vec<Job> {
    let mut planner = Planner::new(cli);
    found.iter().map(|f| planner.job(f)).collect()
}

/// Resolves settings capture by capture, so a batch plans each capture just before it is analysed
/// and holds only the jobs in flight. Sidecars, circuit models and nameplates are read once each
/// and kept.
pub struct Planner<'a> {
    cli: &'a Layer,
    sidecars: HashMap<PathBuf, Option<Result<Arc<Sidecar>, String>>>,
    files: FileCache,
    /// Settings errors already told (each is told once, however many captures it stops).
    told: HashSet<String>,
    /// For each sidecar read (by folder), which of its `[[files]]` patterns matched a capture.
    matched: HashMap<PathBuf, Vec<bool>>,
}

/// The files settings refer to (circuit models, nameplates, bank-out captures), each read once,
/// and their content fingerprints, which go into the settings fingerprint so that `--resume`
/// redoes a capture when one of them changed.
#[derive(Default)]
struct FileCache {
    models: HashMap<PathBuf, Result<Arc<Circuit>, String>>,
    nameplates: HashMap<PathBuf, Result<NameplateFile, String>>,
    fingerprints: HashMap<PathBuf, String>,
}

impl FileCache {
    fn fingerprint(&mut self, path: &Path) -> String {
        self.fingerprints
            .entry(path.to_path_buf())
            .or_insert_with(|| fingerprint_file(path).unwrap_or_else(|_| "unreadable".into()))
            .clone()
    }
}

impl<'a> Planner<'a> {
    /// A planner with the command line's settings on top of every sidecar.
    pub fn new(cli: &'a Layer) -> Self {
        Planner {
            cli,
            sidecars: HashMap::new(),
            files: FileCache::default(),
            told: HashSet::new(),
            matched: HashMap::new(),
        }
    }

    /// One line for each `[[files]]` pattern of the sidecars read that matched none of the
    /// captures planned so far (call it when all are planned), naming the sidecar, the line and
    /// the pattern, in the order of the sidecars' paths and lines.
    pub fn unmatched_patterns(&self) -> Vec<String> {
        let mut out = Vec::new();
        let mut dirs: Vec<&PathBuf> = self.matched.keys().collect();
        dirs.sort();
        for dir in dirs {
            let Some(Some(Ok(s))) = self.sidecars.get(dir) else {
                continue;
            };
            for (p, seen) in s.files.iter().zip(&self.matched[dir]) {
                if !seen {
                    out.push(format!(
                        "{}: line {}: the [[files]] pattern \"{}\" matches no capture of this \
                         batch; its settings were used nowhere",
                        dir.join(SIDECAR).display(),
                        p.line,
                        p.pattern
                    ));
                }
            }
        }
        out
    }

    /// The job of one capture.
    pub fn job(&mut self, f: &Found) -> Job {
        let name = f
            .path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        let mut layer = Layer::default();
        let mut trouble = None;
        let mut announce = Vec::new();
        for dir in folders_between(&f.root, &f.path) {
            let entry = self.sidecars.entry(dir.clone()).or_insert_with(|| {
                let p = dir.join(SIDECAR);
                let s = p
                    .is_file()
                    .then(|| Sidecar::load(&p).map(Arc::new).map_err(|e| e.to_string()));
                // told when first read: once per sidecar, whatever the captures under it
                if let Some(note) = s.as_ref().and_then(|s| s.as_ref().ok()?.note.clone()) {
                    announce.push(format!("note: {note}"));
                }
                s
            });
            match entry {
                Some(Ok(s)) => {
                    layer.apply(&s.base);
                    let seen = self
                        .matched
                        .entry(dir.clone())
                        .or_insert_with(|| vec![false; s.files.len()]);
                    for (k, p) in s.matching(&name) {
                        seen[k] = true;
                        layer.apply(&p.layer);
                    }
                }
                Some(Err(e)) => trouble = Some(e.clone()),
                None => {}
            }
        }
        layer.apply(self.cli);
        let settings_json = serde_json::to_string(&layer).unwrap_or_default();
        let setup = match trouble {
            Some(e) => Err(e),
            None => resolve(&layer, &f.path, &mut self.files),
        };
        if let Err(e) = &setup
            && self.told.insert(e.clone())
        {
            announce.push(format!(
                "error: {e} (no capture these settings apply to is analysed)"
            ));
        }
        let mut referenced = String::new();
        let before = setup
            .as_ref()
            .ok()
            .and_then(|s| s.bank.as_ref())
            .map(|b| b.before.clone());
        for p in [layer.expect.clone(), layer.bank.nameplate.clone(), before]
            .into_iter()
            .flatten()
        {
            referenced.push('|');
            referenced.push_str(&self.files.fingerprint(&p));
        }
        let settings_hash = summary::fingerprint(format!("{settings_json}{referenced}").as_bytes());
        Job {
            path: f.path.clone(),
            setup,
            settings_json,
            settings_hash,
            announce,
        }
    }
}

/// The folders from `root` down to the folder holding `file` (both included).
fn folders_between(root: &Path, file: &Path) -> Vec<PathBuf> {
    let parent = file.parent().unwrap_or(Path::new(""));
    let mut out = vec![root.to_path_buf()];
    if let Ok(rest) = parent.strip_prefix(root) {
        let mut d = root.to_path_buf();
        for c in rest.components() {
            d.push(c);
            out.push(d.clone());
        }
    }
    out
}

fn positive(x: Option<f64>, default: f64, name: &str) -> Result<f64, String> {
    match x {
        None => Ok(default),
        Some(v) if v.is_finite() && v > 0.0 => Ok(v),
        Some(v) => Err(format!("{name} must be a positive number, not {v}")),
    }
}

fn limit(x: Option<f64>, default: f64, name: &str) -> Result<f64, String> {
    match x {
        None => Ok(default),
        Some(v) if v.is_finite() && v >= 0.0 => Ok(v),
        Some(v) => Err(format!("{name} must be zero or a positive number, not {v}")),
    }
}

/// Turns a resolved layer into a [`Setup`]. Each value was checked where it was written (a
/// sidecar's line, or the command line); what is checked here is how they go together.
fn resolve(l: &Layer, capture: &Path, files: &mut FileCache) -> Result<Setup, String> {
    let d = Settings::default();
    let du = UncertaintyInputs::default();
    let nonzero = |x: Option<f64>, name: &str| match x {
        None => Ok(1.0),
        Some(v) if v.is_finite() && v != 0.0 => Ok(v),
        Some(v) => Err(format!("{name} must be a finite, non-zero number, not {v}")),
    };
    let rate_hz = match l.rate {
        None => None,
        Some(r) => Some(positive(Some(r), 0.0, "rate")?),
    };
    let skew_s = l.skew.unwrap_or(0.0);
    if !skew_s.is_finite() {
        return Err("skew must be a finite number of seconds".into());
    }
    let zero = match l.time_zero.as_deref() {
        None => TimeZero::Start,
        Some(t) => TimeZero::parse(t)
            .ok_or_else(|| format!("time_zero must be \"start\" or \"trigger\", not \"{t}\""))?,
    };
    let span = SpanRequest::new(l.from, l.to, zero)?;
    let harmonics = l.harmonics.unwrap_or(d.harmonics);
    if harmonics == 0 {
        return Err("harmonics must be at least 1".into());
    }
    let pf_threshold = positive(l.pf_threshold, d.pf_threshold, "pf_threshold")?;
    if pf_threshold > 1.0 {
        return Err(format!(
            "pf_threshold must be above 0 and at most 1, not {pf_threshold}"
        ));
    }
    let adc = match (l.adc_bits, l.v_full_scale, l.i_full_scale) {
        (None, None, None) => None,
        (Some(bits), Some(v), Some(i)) => {
            if !(1..=32).contains(&bits) {
                return Err(format!("adc_bits must be 1 to 32, not {bits}"));
            }
            Some(Adc {
                bits,
                v_full_scale: positive(Some(v), 0.0, "v_full_scale")?,
                i_full_scale: positive(Some(i), 0.0, "i_full_scale")?,
            })
        }
        _ => {
            return Err(
                "adc_bits, v_full_scale and i_full_scale go together: give all three".into(),
            );
        }
    };
    let settings = Settings {
        v_scale: nonzero(l.v_scale, "v_scale")?,
        i_scale: nonzero(l.i_scale, "i_scale")?,
        skew_s,
        harmonics,
        pf_threshold,
        declared_voltage_v: match l.declared_voltage {
            None => None,
            Some(u) => Some(positive(Some(u), 0.0, "declared_voltage")?),
        },
        uncertainty: UncertaintyInputs {
            v_ratio_percent: limit(l.v_ratio_accuracy, du.v_ratio_percent, "v_ratio_accuracy")?,
            i_ratio_percent: limit(l.i_ratio_accuracy, du.i_ratio_percent, "i_ratio_accuracy")?,
            phase_error_deg: limit(l.phase_error, du.phase_error_deg, "phase_error")?,
            skew_s: limit(l.skew_uncertainty, du.skew_s, "skew_uncertainty")?,
            clock_ppm: limit(l.clock_ppm, du.clock_ppm, "clock_ppm")?,
            harmonic_percent: limit(
                l.harmonic_accuracy,
                du.harmonic_percent,
                "harmonic_accuracy",
            )?,
            adc,
        },
    };
    let dm = MonteCarloConfig::default();
    let monte_carlo = MonteCarloConfig {
        draws: match l.draws {
            Some(n) if n == 0 || n > MAX_DRAWS => {
                return Err(format!("draws must be from 1 to {MAX_DRAWS}, not {n}"));
            }
            n => n.unwrap_or(dm.draws),
        },
        seed: l.seed.unwrap_or(dm.seed),
        distribution: match l.distribution.as_deref() {
            None => dm.distribution,
            Some("uniform") => Distribution::Uniform,
            Some("normal") => Distribution::Normal,
            Some(other) => {
                return Err(format!(
                    "distribution must be \"uniform\" or \"normal\", not \"{other}\""
                ));
            }
        },
    };
    let expect = match &l.expect {
        None => None,
        Some(p) => Some(
            files
                .models
                .entry(p.clone())
                .or_insert_with(|| Circuit::load(p).map(Arc::new).map_err(|e| e.to_string()))
                .clone()?,
        ),
    };
    let meter = match (&l.meter.reading, &l.meter.class) {
        (None, None) => None,
        (Some(r), Some(c)) => Some(MeterSpec {
            reading: Reading::parse(r).map_err(|e| format!("meter reading: {e}"))?,
            class: AccuracyClass::parse(c).map_err(|e| format!("meter class: {e}"))?,
            pf_sign: PfSign::parse(l.meter.pf_sign.as_deref().unwrap_or("power-flow"))
                .map_err(|e| format!("meter pf_sign: {e}"))?,
            rated_current: match l.meter.rated_current {
                Some(r) if !(r.is_finite() && r > 0.0) => {
                    return Err(format!(
                        "meter rated_current must be a positive number of amperes, not {r}"
                    ));
                }
                r => r,
            },
            connection: l
                .meter
                .connection
                .as_deref()
                .map(meter::Connection::parse)
                .transpose()
                .map_err(|e| format!("meter connection: {e}"))?,
            reactive_class: l
                .meter
                .reactive_class
                .as_deref()
                .map(AccuracyClass::parse)
                .transpose()
                .map_err(|e| format!("meter reactive_class: {e}"))?,
        }),
        _ => return Err("a meter needs both a reading and a class".into()),
    };
    if let Some(spec) = &meter {
        spec.meter().validate().map_err(|e| format!("meter: {e}"))?;
    }
    let bank = if l.bank == Default::default() {
        None
    } else {
        let b = &l.bank;
        let before = b
            .before
            .as_ref()
            .ok_or("bank: `before` is missing: name the capture with the bank switched out")?;
        let file = match &b.nameplate {
            None => NameplateFile::default(),
            Some(p) => files
                .nameplates
                .entry(p.clone())
                .or_insert_with(|| NameplateFile::load(p).map_err(|e| e.to_string()))
                .clone()?,
        };
        // a value from the nameplate file is named with the file, one from the sidecar as its key
        let name = |k: &'static str| match &b.nameplate {
            Some(p) if !b.values.has(k) && file.has(k) => format!("{}: {k}", p.display()),
            _ => k.to_string(),
        };
        let keys = KeyNames {
            name: &name,
            ..KeyNames::FILE
        };
        let nameplate = Nameplate::resolve(&b.values.clone().or(file.clone()), &keys)
            .map_err(|e| format!("bank: {e}"))?;
        let folder = capture.parent().unwrap_or(Path::new(""));
        Some(BankSpec {
            nameplate,
            before: folder.join(before),
        })
    };
    Ok(Setup {
        load: LoadOptions {
            voltage: l.voltage.as_deref().map(ChannelSel::parse),
            current: l.current.as_deref().map(ChannelSel::parse),
            neutral: l.neutral.as_deref().map(ChannelSel::parse),
            system: l.system.as_deref().and_then(crate::capture::System::parse),
            rate_hz,
            force_channels: l.force_channels.unwrap_or(false),
            secondary_values: l.secondary.unwrap_or(false),
            span,
        },
        settings,
        expect,
        monte_carlo,
        meter,
        bank,
    })
}

/// Fingerprint of a file's bytes, read in 64 KiB blocks.
pub fn fingerprint_file(path: &Path) -> std::io::Result<String> {
    let mut f = std::fs::File::open(path)?;
    let mut fp = summary::Fingerprint::default();
    let mut buf = vec![0u8; 64 * 1024];
    loop {
        match f.read(&mut buf)? {
            0 => break,
            n => fp.update(&buf[..n]),
        }
    }
    Ok(fp.finish())
}

/// Loads, analyses and checks one capture. Never fails: trouble becomes an `error` row.
pub fn process(job: &Job) -> Row {
    process_keeping(job, false).0
}

/// What a report needs of an analysed capture: the analysis, the circuit model's prediction when
/// there is one, and the capture's windows over time for its trend plot when asked for and the
/// capture is long enough ([`crate::report::plot::trend::MIN_WINDOWS`]).
pub type Kept = (analysis::Analysis, Option<Expectation>, Option<TrendResult>);

/// [`process`], also returning what a report needs ([`Kept`]; the trend only `with_trend`).
/// The row's content fingerprint is of the bytes analysed ([`content::read_checked`]); a
/// capture that changed while it was read is an error row.
pub fn process_keeping(job: &Job, with_trend: bool) -> (Row, Option<Kept>) {
    let ((mut row, kept), hash) = content::read_checked(&job.path, || analyse_row(job, with_trend));
    match hash {
        Ok(h) => {
            row.content_hash = h;
            (row, kept)
        }
        Err(content::Changed) => {
            row.status = Status::Error;
            row.message = format!(
                "{}: the file changed while it was read: run again (or with --resume) to \
                 analyse it as it is now",
                row.file
            );
            row.result = None;
            row.verdict_failed = false;
            row.not_a_capture = false;
            (row, None)
        }
    }
}

fn analyse_row(job: &Job, with_trend: bool) -> (Row, Option<Kept>) {
    let file = summary::path_text(&job.path);
    let mut row = Row {
        file: file.clone(),
        status: Status::Error,
        message: String::new(),
        content_hash: String::new(),
        settings_hash: job.settings_hash.clone(),
        settings: job.settings_json.clone(),
        result: None,
        verdict_failed: false,
        not_a_capture: false,
    };
    let setup = match &job.setup {
        Ok(s) => s,
        Err(e) => {
            row.message = format!("{file}: settings: {e}");
            return (row, None);
        }
    };
    let mut trend = None;
    let analysed = match capture::load(&job.path, &setup.load) {
        Ok(c) => {
            // the trend first: the analysis takes the capture
            trend = with_trend
                .then(|| crate::trend::trend_if_long(&c, &setup.settings, MIN_WINDOWS))
                .flatten()
                .map(|t| t.map_err(|e| e.to_string()));
            analysis::analyze(c, &setup.settings).map_err(|e| e.to_string())
        }
        Err(e) => {
            // only a `.txt` is taken for notes: a `.csv` or `.wav` of no use is a failed export
            row.not_a_capture = e.kind.is_not_a_capture()
                && job
                    .path
                    .extension()
                    .is_some_and(|x| x.eq_ignore_ascii_case("txt"));
            Err(e.to_string())
        }
    };
    let mut a = match analysed {
        Ok(a) => a,
        Err(e) => {
            row.message = e;
            return (row, None);
        }
    };
    let wants_single = [
        (setup.expect.is_some(), "the model comparison"),
        (setup.bank.is_some(), "the bank check"),
    ];
    for (wanted, what) in wants_single {
        if wanted && let Err(e) = a.single_phase_only(what) {
            row.message = e;
            return (row, None);
        }
    }
    let predicted = match &setup.expect {
        Some(model) => a.compare_with_model(model, &setup.monte_carlo),
        None => None,
    };
    row.verdict_failed |= a.expected.as_ref().is_some_and(|e| e.failed());
    let mut result = serde_json::to_value(AnalysisRecord::from(&a)).unwrap_or(Value::Null);
    if let (Some(spec), Some(m)) = (&setup.meter, a.meter_measured()) {
        let meter = spec.meter();
        let mut r = meter::check(&spec.reading, &m, &meter, &a.warnings);
        if let Some(p) = spec.reading.p_w {
            let mut hints = a.meter_connection_hints(p, spec.reading.q_var);
            hints.append(&mut r.wiring_hints);
            r.wiring_hints = hints;
        }
        let failed: Vec<&str> = r
            .checks
            .iter()
            .filter(|c| c.verdict == MeterVerdict::Fail)
            .map(|c| c.quantity)
            .collect();
        let verdict = if !failed.is_empty() {
            "fail"
        } else if r
            .checks
            .iter()
            .any(|c| c.verdict == MeterVerdict::Inconclusive)
        {
            "inconclusive"
        } else {
            "pass"
        };
        row.verdict_failed |= !failed.is_empty();
        // the meter check left the checks resting on a doubtful trace inconclusive; say why
        let doubts = a.verdict_doubts();
        let reason = (verdict == "inconclusive" && !doubts.is_empty()).then(|| {
            format!(
                "the capture cannot support the figures: {}",
                doubts.join("; ")
            )
        });
        if let Value::Object(m) = &mut result {
            m.insert(
                "meter".into(),
                serde_json::json!({
                    "verdict": verdict,
                    "reason": reason,
                    "failed_checks": failed,
                    "wiring_hints": r.wiring_hints,
                    "class": r.class,
                    "quadrant": r.quadrant,
                    "checks": r.checks,
                }),
            );
        }
    }
    row.status = a.status();
    row.message = crate::report::wire::words(&a, Severity::Warning).join("; ");
    // The bank-out capture itself, matched by the same pattern, has nothing to compare with.
    if let Some(spec) = setup.bank.as_ref().filter(|b| b.before != job.path) {
        match bank_check(&a, spec, setup) {
            Ok((mut r, before)) => {
                // The delivered kvar rests on both captures: either one's doubts leave the
                // verdict inconclusive, and the bank-out capture's warnings join this row's.
                let before_name = before.path.display().to_string();
                let mut doubts = a.verdict_doubts();
                doubts.extend(
                    before
                        .verdict_doubts()
                        .into_iter()
                        .map(|d| format!("bank-out capture {before_name}: {d}")),
                );
                let reason = (!doubts.is_empty()).then(|| {
                    format!(
                        "the captures cannot support the delivered kvar: {}",
                        doubts.join("; ")
                    )
                });
                if reason.is_some() {
                    r.verdict = BankVerdict::Inconclusive;
                }
                let before_warnings = crate::report::wire::words(&before, Severity::Warning);
                if !before_warnings.is_empty() {
                    row.status = Status::Warning;
                    let theirs = before_warnings
                        .iter()
                        .map(|w| format!("bank-out capture {before_name}: {w}"))
                        .collect::<Vec<_>>()
                        .join("; ");
                    row.message = if row.message.is_empty() {
                        theirs
                    } else {
                        format!("{}; {theirs}", row.message)
                    };
                }
                row.verdict_failed |= r.verdict == BankVerdict::Fail;
                if let Value::Object(m) = &mut result {
                    m.insert(
                        "bank".into(),
                        serde_json::json!({
                            "verdict": r.verdict,
                            "reason": reason,
                            "before_warnings": before_warnings,
                            "before": spec.before.display().to_string(),
                            "delivered_kvar": r.delivered_kvar,
                            "delivered_uncertainty_kvar": r.delivered_uncertainty_kvar,
                            "expected_kvar": r.expected_kvar,
                            "ratio": r.ratio,
                            "failed_steps": r.failed_steps,
                            "standard": r.standard,
                            "over_corrected": r.over_corrected,
                            "warnings": r.warnings,
                        }),
                    );
                }
            }
            // The check was asked for and could not run: an input error, like an unreadable file.
            Err(e) => {
                row.status = Status::Error;
                row.message = if row.message.is_empty() {
                    format!("{file}: bank check: {e}")
                } else {
                    format!("{file}: bank check: {e}; {}", row.message)
                };
            }
        }
    }
    row.result = Some(result);
    (row, Some((a, predicted, trend)))
}

/// The bank check of an analysed capture against its bank-out capture, analysed here with the
/// same settings; gives the bank-out capture's analysis too (its warnings travel with the row).
fn bank_check(
    after: &analysis::Analysis,
    spec: &BankSpec,
    setup: &Setup,
) -> Result<(BankReport, analysis::Analysis), String> {
    let before = capture::load(&spec.before, &setup.load)
        .map_err(|e| format!("bank-out capture {e}"))
        .and_then(|c| {
            analysis::analyze(c, &setup.settings).map_err(|e| format!("bank-out capture {e}"))
        })?;
    let (b, a) = analysis::bank_pair(&before, after, &spec.nameplate)?;
    let report = bank::check_bank(&b, &a, &spec.nameplate);
    Ok((report, before))
}

/// The CSV columns of a summary: the lead columns, the `analyze` keys flattened with dots (the
/// spectrum left out), and the verdict columns.
pub fn csv_columns() -> Vec<String> {
    let mut c: Vec<String> = summary::LEAD_COLUMNS
        .iter()
        .map(|s| s.to_string())
        .collect();
    c.extend(
        crate::report::wire::analysis_columns()
            .into_iter()
            .filter(|k| k != "file" && k != "status"),
    );
    c.extend(summary::VERDICT_COLUMNS.iter().map(|s| s.to_string()));
    c
}
