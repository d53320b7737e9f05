//! Writes a folder of synthetic captures for the batch benchmark (invented bench data):
//! `make-batch-set DIR COUNT SAMPLES [wav|csv]`, each capture a 50 Hz load of its own angle and
//! size, 20 000 samples at 10 kHz by default, in ten subfolders.

use std::path::PathBuf;
use tracephase::synth::{Spec, Waveform, synthesize};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().collect();
    if args.len() < 4 {
        return Err("usage: make-batch-set DIR COUNT SAMPLES [wav|csv]".into());
    }
    let dir = PathBuf::from(&args[1]);
    let count: usize = args[2].parse()?;
    let samples: usize = args[3].parse()?;
    let csv = args.get(4).is_some_and(|f| f == "csv");
    let rate = 10_000.0;
    for k in 0..count {
        let sub = dir.join(format!("feeder-{:02}", k % 10));
        std::fs::create_dir_all(&sub)?;
        let mut spec = Spec::clean(
            rate,
            50.0 + (k % 7) as f64 * 0.01,
            samples,
            Waveform::sine(230.0, 0.0)
                .with(5, 6.0, 40.0)
                .with(7, 3.0, 10.0),
            Waveform::sine(5.0 + (k % 13) as f64, -(((k * 7) % 80) as f64)).with(3, 0.4, 20.0),
        );
        spec.snr_db = Some(60.0);
        spec.seed = k as u64;
        let (v, i) = synthesize(&spec);
        if csv {
            let mut text = String::with_capacity(samples * 32);
            text.push_str("time,voltage,current\n");
            for (n, (a, b)) in v.iter().zip(&i).enumerate() {
                text.push_str(&format!("{:.6},{a:.3},{b:.5}\n", n as f64 / rate));
            }
            std::fs::write(sub.join(format!("capture-{k:05}.csv")), text)?;
        } else {
            let wav = hound::WavSpec {
                channels: 2,
                sample_rate: rate as u32,
                bits_per_sample: 16,
                sample_format: hound::SampleFormat::Int,
            };
            let mut w = hound::WavWriter::create(sub.join(format!("capture-{k:05}.wav")), wav)?;
            for (a, b) in v.iter().zip(&i) {
                w.write_sample((a / 500.0 * 32767.0).round() as i16)?;
                w.write_sample((b / 50.0 * 32767.0).round() as i16)?;
            }
            w.finalize()?;
        }
    }
    Ok(())
}
