//! Records made by others: two sample records shipped, under the MIT licence, with a
//! general-purpose open-source COMTRADE reader on the Python package index (provenance and
//! licence in `tests/data/README.md`). Each value checked here is one that package's own tests
//! assert, or one that follows from the record itself by a fact of the trade, named beside it.

use assert_cmd::Command;
use std::path::{Path, PathBuf};
use tracephase::capture::comtrade::{DataFormat, read_record};

fn data(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/records")
        .join(name)
}

#[test]
fn a_1999_binary_record_of_four_voltages_reads_as_its_readers_tests_say() {
    let r = read_record(&data("recorder-1999-binary-four-voltages.cfg"), false).unwrap();
    let c = &r.config;
    assert_eq!(
        (c.station.as_str(), c.device.as_str()),
        ("station", "equipment")
    );
    assert_eq!(c.revision, 1999);
    assert_eq!((c.analog.len(), c.digital.len()), (4, 16));
    assert_eq!(c.format, DataFormat::Binary);
    assert_eq!(c.line_frequency_hz, 60.0);
    assert_eq!(c.rates, vec![(15360.0, 5)]);
    assert_eq!(r.values[0].len(), 5);
    // the package's test: the 4th sample of VA is −23425 × 0.000361849 kV, to 6 places
    let va_4 = -23425.0 * 0.000361849;
    assert!((r.values[0][3] - va_4).abs() < 5e-7, "{}", r.values[0][3]);
    // the package's test: the phase-to-ground voltages and VN sum to about 0 (to 1 place)
    let sum: f64 = (0..4).map(|k| r.values[k][0]).sum();
    assert!(sum.abs() < 0.05, "{sum}");
    // its date-times as written, 65 µs apart [computed from the two lines of the .cfg]
    assert_eq!(r.times.start.as_deref(), Some("07/01/2017,15:35:41.958268"));
    assert_eq!(
        r.times.trigger.as_deref(),
        Some("07/01/2017,15:35:41.958333")
    );
    assert!((r.times.trigger_offset_s.unwrap() - 65e-6).abs() < 1e-9);
}

#[test]
fn a_2013_ascii_record_of_four_currents_reads_as_its_readers_tests_say() {
    let path = data("relay-2013-ascii-four-currents.cfg");
    let r = read_record(&path, false).unwrap();
    let c = &r.config;
    // the package's tests: station, device, revision, channel counts, frequency, samples, type
    assert_eq!(
        (c.station.as_str(), c.device.as_str()),
        ("SMARTSTATION", "IED123")
    );
    assert_eq!(c.revision, 2013);
    assert_eq!((c.analog.len(), c.digital.len()), (4, 4));
    assert_eq!(c.line_frequency_hz, 60.0);
    assert_eq!(c.samples, 40);
    assert_eq!(c.format, DataFormat::Ascii);
    assert!(r.values.iter().all(|v| v.len() == 40));
    // the time stamps rise by 1/1200 s on average, as the one sample rate says
    let step_us = (r.stamps[39] - r.stamps[0]) / 39.0;
    assert!((step_us - 1e6 / 1200.0).abs() < 0.5, "{step_us}");
    // secondary amperes a·x + b (the channels are flagged `s`), primary through the 933/1 ratio
    let sec = read_record(&path, true).unwrap();
    let (a, b) = (0.1138916015625, 0.05694580078125);
    assert!((sec.values[0][0] - (a * -83.0 + b)).abs() < 1e-12);
    assert!((r.values[0][0] - (a * -83.0 + b) * 933.0).abs() < 1e-9);
    // the residual channel 3I0 is the sum of the three line currents (Kirchhoff; what a
    // relay's residual input measures, common practice), here to within the converter's
    // rounding of four channels and their offsets b: 3 counts
    for s in 0..40 {
        let sum = sec.values[0][s] + sec.values[1][s] + sec.values[2][s];
        assert!((sum - sec.values[3][s]).abs() <= 3.0 * a, "sample {s}");
    }
    assert!((r.times.trigger_offset_s.unwrap() - 0.00325).abs() < 1e-9);
}

#[test]
fn records_without_a_voltage_and_a_current_are_refused_in_one_line() {
    for name in [
        "relay-2013-ascii-four-currents.cfg",
        "recorder-1999-binary-four-voltages.cfg",
    ] {
        let out = Command::cargo_bin("tracephase")
            .unwrap()
            .args(["analyze", data(name).to_str().unwrap()])
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{err}");
        assert_eq!(err.lines().count(), 1, "{err}");
        assert!(err.contains(name), "{err}");
    }
}
