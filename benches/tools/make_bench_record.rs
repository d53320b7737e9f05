//! Writes an IEEE C37.111-1999 BINARY record for the end-to-end benchmark (`benches/comtrade.sh`):
//! `make-bench-record OUT.cfg SAMPLES RATE_HZ` writes `OUT.cfg` and `OUT.dat` with 8 analog
//! channels (VA VB VC of a 4-wire system, IA IB IC, the neutral IN and a spare residual voltage
//! V0 that the analysis leaves out) and 2 status channels, secondary values through 11000/110 V
//! and 400/1 A ratios, a 50 Hz load lagging 30° with a 5th harmonic. Invented benchmark data.

use std::f64::consts::PI;
use std::io::{BufWriter, Write};

fn main() -> std::io::Result<()> {
    let args: Vec<String> = std::env::args().collect();
    let (Some(out), Some(n), Some(rate)) = (args.get(1), args.get(2), args.get(3)) else {
        eprintln!("usage: make-bench-record OUT.cfg SAMPLES RATE_HZ");
        std::process::exit(2);
    };
    let n: usize = n.parse().expect("SAMPLES: a whole number");
    let rate: f64 = rate.parse().expect("RATE_HZ: a number");
    let cfg_path = std::path::Path::new(out);
    // id, ph, units, a, primary, secondary
    let chans = [
        ("VA", "A", "V", 0.005, 11_000, 110),
        ("VB", "B", "V", 0.005, 11_000, 110),
        ("VC", "C", "V", 0.005, 11_000, 110),
        ("IA", "A", "A", 0.0001, 400, 1),
        ("IB", "B", "A", 0.0001, 400, 1),
        ("IC", "C", "A", 0.0001, 400, 1),
        ("IN", "N", "A", 0.0001, 400, 1),
        ("V0", "", "V", 0.005, 11_000, 110),
    ];
    let mut cfg = format!(
        "Benchmark bay (invented),bench recorder,1999\n10,{}A,2D\n",
        chans.len()
    );
    for (k, (id, ph, units, a, p, s)) in chans.iter().enumerate() {
        cfg.push_str(&format!(
            "{},{id},{ph},bay,{units},{a},0,0,-32767,32767,{p},{s},S\n",
            k + 1
        ));
    }
    cfg.push_str("1,PICKUP,,bay,0\n2,TRIP,,bay,0\n50\n1\n");
    cfg.push_str(&format!("{rate},{n}\n"));
    cfg.push_str("02/12/2026,12:00:00.000000\n02/12/2026,12:00:01.000000\nBINARY\n1\n");
    std::fs::write(cfg_path, cfg)?;
    let mut dat = BufWriter::with_capacity(
        1 << 20,
        std::fs::File::create(cfg_path.with_extension("dat"))?,
    );
    let w = 2.0 * PI * 50.0 / rate;
    let mut rec = Vec::with_capacity(8 + 2 * chans.len() + 2);
    // a converter's noise of about one count (xorshift, fixed seed): a noiseless record of a
    // whole number of samples per cycle would repeat the same few hundred values
    let mut state = 0x2545_f491_4f6c_dd1du64;
    let mut dither = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64 * 2.0 - 1.0
    };
    for s in 0..n {
        rec.clear();
        rec.extend((s as u32 + 1).to_le_bytes());
        rec.extend(((s as f64 * 1e6 / rate) as u32).to_le_bytes());
        let x = w * s as f64;
        let mut sum_i = 0.0;
        for (k, &(_, _, _, a, _, _)) in chans.iter().enumerate() {
            let shift = [0.0, -2.0 * PI / 3.0, 2.0 * PI / 3.0][k % 3];
            let value = match k {
                0..=2 => {
                    63.5 * 2f64.sqrt() * ((x + shift).cos() + 0.01 * (5.0 * (x + shift)).cos())
                }
                3..=5 => {
                    let amps = [0.45, 0.42, 0.48][k - 3];
                    let i = amps
                        * 2f64.sqrt()
                        * ((x + shift - PI / 6.0).cos() + 0.05 * (5.0 * (x + shift) - 1.0).cos());
                    sum_i += i;
                    i
                }
                6 => sum_i,
                _ => 0.2 * (x).sin(),
            };
            rec.extend(((value / a + dither()).round() as i16).to_le_bytes());
        }
        rec.extend(0u16.to_le_bytes());
        dat.write_all(&rec)?;
    }
    dat.flush()
}
