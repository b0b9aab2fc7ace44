//! ns per complex f64 FFT: noisewright's deterministic FFT (with and without its AVX2 copy)
//! against rustfft's scalar planner and its auto (SIMD) planner, at 2048 and 8192 points.
//!
//! Usage: `cargo run --release --example fft_bench [ROUNDS]`. Wall-clock timing: on a shared
//! machine the numbers move by tens of percent between runs; the rounds alternate the four
//! implementations and the table gives the median round. Instruction counts (callgrind) are
//! the repeatable measure.
use std::hint::black_box;
use std::time::Instant;

use noisewright::fft::Fft;
use rustfft::num_complex::Complex;
use rustfft::{FftPlanner, FftPlannerScalar};

fn main() {
    let rounds: usize = std::env::args()
        .nth(1)
        .map(|s| s.parse().expect("ROUNDS is a count"))
        .unwrap_or(9);
    println!(
        "| N | ours (AVX2 if present) ns | ours baseline ns | rustfft scalar ns | rustfft auto ns |"
    );
    println!("|---:|---:|---:|---:|---:|");
    for n in [2048usize, 8192] {
        let reps = (1 << 24) / n;
        let ours = Fft::new(n);
        let base = Fft::baseline(n);
        let scalar = FftPlannerScalar::<f64>::new().plan_fft_forward(n);
        let auto = FftPlanner::<f64>::new().plan_fft_forward(n);
        let x: Vec<f64> = (0..n)
            .map(|k| ((k * 7919) % 1000) as f64 / 1000.0 - 0.5)
            .collect();
        let (mut re, mut im) = (x.clone(), x.clone());
        let (mut tr, mut ti) = (vec![0.0; n], vec![0.0; n]);
        let mut buf: Vec<Complex<f64>> = x.iter().map(|&v| Complex::new(v, v)).collect();
        let mut scratch = vec![
            Complex::new(0.0, 0.0);
            scalar
                .get_inplace_scratch_len()
                .max(auto.get_inplace_scratch_len())
        ];
        let mut times = vec![Vec::new(); 4];
        for _ in 0..rounds {
            let t = Instant::now();
            for _ in 0..reps {
                ours.forward((&mut re, &mut im), (&mut tr, &mut ti));
                black_box(&re);
            }
            times[0].push(t.elapsed().as_secs_f64());
            let t = Instant::now();
            for _ in 0..reps {
                base.forward((&mut re, &mut im), (&mut tr, &mut ti));
                black_box(&re);
            }
            times[1].push(t.elapsed().as_secs_f64());
            let t = Instant::now();
            for _ in 0..reps {
                scalar.process_with_scratch(&mut buf, &mut scratch);
                black_box(&buf);
            }
            times[2].push(t.elapsed().as_secs_f64());
            let t = Instant::now();
            for _ in 0..reps {
                auto.process_with_scratch(&mut buf, &mut scratch);
                black_box(&buf);
            }
            times[3].push(t.elapsed().as_secs_f64());
            // Keep the values bounded: the transforms grow them by √N per call.
            re.copy_from_slice(&x);
            im.copy_from_slice(&x);
            for (b, &v) in buf.iter_mut().zip(&x) {
                *b = Complex::new(v, v);
            }
        }
        let ns: Vec<f64> = times
            .iter_mut()
            .map(|t| {
                t.sort_by(f64::total_cmp);
                t[t.len() / 2] / reps as f64 * 1e9
            })
            .collect();
        println!(
            "| {n} | {:.0} | {:.0} | {:.0} | {:.0} |",
            ns[0], ns[1], ns[2], ns[3]
        );
    }
}
