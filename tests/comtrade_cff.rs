//! The 2013 single-file COMTRADE form (`.cff`, IEEE C37.111-2013 / IEC 60255-24:2013, from
//! memory): a record assembled here from a `.cfg` + `.dat` pair written by the tests' own writer
//! gives exactly the pair's figures, in every data format, with CR LF or LF line ends, with and
//! without INF and HDR sections; `batch` takes `.cff` files; a broken single-file record is one
//! line naming the file and the line.

mod common;

use assert_cmd::Command;
use common::comtrade::{CffLayout, Chan, Fmt, write_cff, write_record, write_record_rates};
use serde_json::Value;
use std::f64::consts::PI;
use std::path::Path;
use tempfile::TempDir;
use tracephase::capture::comtrade::read_record;

const RATE: f64 = 4000.0;

/// A 230 V / 10 A, 30° lagging pair (an invented bench case) as raw counts, 10 cycles of 50 Hz.
fn bench_channels() -> Vec<Chan> {
    let w = 2.0 * PI * 50.0;
    let (v, i): (Vec<f64>, Vec<f64>) = (0..800)
        .map(|s| {
            let t = s as f64 / RATE;
            (
                (230.0 * 2f64.sqrt() * (w * t).cos() / 0.01).round(),
                (10.0 * 2f64.sqrt() * (w * t - PI / 6.0).cos() / 0.001).round(),
            )
        })
        .unzip();
    let chan = |id, units, a, skew_us, raw| Chan {
        id,
        ph: "A",
        units,
        a,
        b: 0.0,
        skew_us,
        ratio: (1.0, 1.0, 'P'),
        raw,
    };
    vec![
        chan("VAN", "V", 0.01, 0.0, v),
        chan("IA", "A", 0.001, 12.5, i),
    ]
}

const FORMATS: [Fmt; 4] = [Fmt::Ascii, Fmt::Binary, Fmt::Binary32, Fmt::Float32];
const LAYOUTS: [CffLayout; 2] = [
    CffLayout {
        crlf: true,
        inf_hdr: true,
    },
    CffLayout {
        crlf: false,
        inf_hdr: false,
    },
];

fn run(args: &[&str]) -> (Option<i32>, String, String) {
    let out = Command::cargo_bin("tracephase")
        .unwrap()
        .args(args)
        .output()
        .unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// `analyze --format json` of `path`, without the file's name.
fn figures(path: &Path) -> Value {
    let (code, out, err) = run(&["analyze", "--format", "json", path.to_str().unwrap()]);
    assert_eq!(code, Some(0), "{err}");
    let mut v: Value = serde_json::from_str(out.lines().next().unwrap()).unwrap();
    v.as_object_mut().unwrap().remove("file");
    v
}

#[test]
fn a_single_file_record_gives_exactly_its_pairs_figures_in_every_data_format() {
    let dir = TempDir::new().unwrap();
    for fmt in FORMATS {
        let cfg = write_record(dir.path(), fmt.name(), &bench_channels(), RATE, fmt);
        let pair = figures(&cfg);
        for (k, layout) in LAYOUTS.into_iter().enumerate() {
            let cff = write_cff(&cfg, fmt, &format!("{}-{k}", fmt.name()), layout);
            assert_eq!(figures(&cff), pair, "{fmt:?} {layout:?}");
            // the reader gives the same values and time stamps
            let (a, b) = (
                read_record(&cfg, false).unwrap(),
                read_record(&cff, false).unwrap(),
            );
            assert_eq!((a.values, a.stamps), (b.values, b.stamps), "{fmt:?}");
            assert_eq!(a.config, b.config);
        }
    }
    // several rates in one file: the part analysed and its span are the pair's
    let w = 2.0 * PI * 50.0;
    let mut chans = bench_channels();
    let times = common::comtrade::sample_times(&[(4000.0, 400), (1000.0, 800)]);
    for (c, amp, a, lag) in [(0, 230.0, 0.01, 0.0), (1, 10.0, 0.001, PI / 6.0)] {
        chans[c].raw = times
            .iter()
            .map(|t| (amp * 2f64.sqrt() * (w * t - lag).cos() / a).round())
            .collect();
    }
    let stamps = ("02/12/2026,08:00:00.000000", "02/12/2026,08:00:00.100000");
    let rates = [(4000.0, 400), (1000.0, 800)];
    let cfg = write_record_rates(dir.path(), "rates", &chans, &rates, Fmt::Binary, stamps);
    let cff = write_cff(&cfg, Fmt::Binary, "rates", LAYOUTS[0]);
    let pair = figures(&cfg);
    assert_eq!(pair["span"]["start_s"], 0.1);
    assert_eq!(figures(&cff), pair);
}

#[test]
fn batch_takes_single_file_records() {
    let dir = TempDir::new().unwrap();
    let cfg = write_record(dir.path(), "pair", &bench_channels(), RATE, Fmt::Binary);
    write_cff(&cfg, Fmt::Binary, "single", LAYOUTS[0]);
    let (code, out, err) = run(&["batch", "--format", "json", dir.path().to_str().unwrap()]);
    assert_eq!(code, Some(0), "{err}");
    let rows: Vec<Value> = out
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    let files: Vec<&str> = rows.iter().map(|r| r["file"].as_str().unwrap()).collect();
    assert_eq!(files.len(), 2, "{out}");
    assert!(
        files[0].ends_with("pair.cfg") && files[1].ends_with("single.cff"),
        "{files:?}"
    );
    assert_eq!(rows[0]["true_pf"], rows[1]["true_pf"]);
}

/// One `error:` line naming the file (and the line, where given), exit code 2.
fn refused(path: &Path, says: &[&str]) {
    let (code, _, err) = run(&["analyze", path.to_str().unwrap()]);
    assert_eq!(code, Some(2), "{err}");
    assert_eq!(err.lines().count(), 1, "{err}");
    assert!(
        err.starts_with(&format!("error: {}: ", path.display())),
        "{err}"
    );
    for s in says {
        assert!(err.contains(s), "{s:?} in {err}");
    }
}

#[test]
fn broken_single_file_records_are_refused_naming_the_file_and_line() {
    let dir = TempDir::new().unwrap();
    let layout = CffLayout {
        crlf: false,
        inf_hdr: true,
    };
    let cfg = write_record(dir.path(), "b", &bench_channels(), RATE, Fmt::Binary);
    let bin = std::fs::read(write_cff(&cfg, Fmt::Binary, "bin", layout)).unwrap();
    let cfg = write_record(dir.path(), "a", &bench_channels(), RATE, Fmt::Ascii);
    let ascii = std::fs::read_to_string(write_cff(&cfg, Fmt::Ascii, "ascii", layout)).unwrap();
    // the binary file's text part (its DAT line is line 18) and data
    let cut = bin.windows(5).position(|w| w == b"DAT B").unwrap() - 15;
    let (head, data) = bin.split_at(cut);
    let head = String::from_utf8(head.to_vec()).unwrap();
    let with = |name: &str, head: &str, marker: &str, data: &[u8]| {
        let p = dir.path().join(name);
        let mut b = head.as_bytes().to_vec();
        b.extend(marker.bytes());
        b.extend(data);
        std::fs::write(&p, b).unwrap();
        p
    };
    let data_only = &data[data.iter().position(|&b| b == b'\n').unwrap() + 1..];
    let n = data_only.len();
    let line = |k: usize| format!("line {k}: ");
    // the sections in the wrong order: the INF section first
    let p = with(
        "inf-first.cff",
        &head.replacen("--- file type: CFG ---\n", "--- file type: INF ---\n", 1),
        &format!("--- file type: DAT BINARY: {n} ---\n"),
        data_only,
    );
    refused(&p, &[&line(1), "must come first"]);
    // text before the first section (sniffed as text: a capture of no kind we read)
    // no data section at all
    let p = with("no-dat.cff", &head, "", b"");
    refused(&p, &["no data section"]);
    // a byte count beyond the file: refused before anything is read
    for count in ["4294967295", "18446744073709551615", &(n + 1).to_string()] {
        let p = with(
            "long.cff",
            &head,
            &format!("--- file type: DAT BINARY: {count} ---\n"),
            data_only,
        );
        refused(
            &p,
            &[
                &line(18),
                &format!("claims {count} bytes, but only {n} follow"),
            ],
        );
    }
    // a count that is not a number, or none at all
    let p = with(
        "word.cff",
        &head,
        "--- file type: DAT BINARY: many ---\n",
        data_only,
    );
    refused(&p, &[&line(18), "byte count is 'many'"]);
    let p = with(
        "none.cff",
        &head,
        "--- file type: DAT BINARY ---\n",
        data_only,
    );
    refused(&p, &[&line(18), "gives no byte count"]);
    // a count shorter than the data the configuration promises
    let p = with(
        "short.cff",
        &head,
        &format!("--- file type: DAT BINARY: {} ---\n", n - 12),
        data_only,
    );
    refused(&p, &["follow the"]);
    // an ASCII data line for a BINARY configuration
    let p = with(
        "kind.cff",
        &head,
        "--- file type: DAT ASCII ---\n",
        data_only,
    );
    refused(
        &p,
        &[
            &line(18),
            "the data section is ASCII",
            "data file type is BINARY",
        ],
    );
    // a second CFG section, an unknown one
    let twice = head.replace("--- file type: HDR ---", "--- file type: CFG ---");
    let p = with(
        "twice.cff",
        &twice,
        &format!("--- file type: DAT BINARY: {n} ---\n"),
        data_only,
    );
    refused(&p, &[&line(16), "a second CFG section"]);
    let xml = head.replace("--- file type: HDR ---", "--- file type: XML ---");
    let p = with(
        "xml.cff",
        &xml,
        &format!("--- file type: DAT BINARY: {n} ---\n"),
        data_only,
    );
    refused(&p, &[&line(16), "section type 'XML'"]);
    // a section after the data: after binary data, after ASCII lines
    let mut after = data_only.to_vec();
    after.extend(b"--- file type: INF ---\nmore\n");
    let p = with(
        "after.cff",
        &head,
        &format!("--- file type: DAT BINARY: {n} ---\n"),
        &after,
    );
    refused(&p, &[&line(18), "must be the last"]);
    let p = dir.path().join("ascii-after.cff");
    std::fs::write(&p, format!("{ascii}--- file type: HDR ---\nlate\n")).unwrap();
    refused(&p, &[&line(819), "after the data section"]);
    // a malformed CFG line is named by its line in the single file: the first analog channel's
    // line is the .cfg's third, the file's fourth
    let p = dir.path().join("bad-cfg.cff");
    std::fs::write(&p, ascii.replacen(",0.01,", ",x,", 1)).unwrap();
    refused(&p, &[&line(4), "the multiplier a is 'x'"]);
}
