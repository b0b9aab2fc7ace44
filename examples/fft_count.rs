//! Runs one FFT length REPS times (for instruction counts under callgrind).
//!
//! Usage: `fft_count N REPS [ours|base|scalar]`.
use noisewright::fft::Fft;
use rustfft::FftPlannerScalar;
use rustfft::num_complex::Complex;
use std::hint::black_box;

fn main() {
    let a: Vec<String> = std::env::args().collect();
    let n: usize = a[1].parse().unwrap();
    let reps: usize = a[2].parse().unwrap();
    let which = a.get(3).map(String::as_str).unwrap_or("ours");
    let x: Vec<f64> = (0..n)
        .map(|k| ((k * 7919) % 1000) as f64 / 1000.0 - 0.5)
        .collect();
    let (mut re, mut im) = (x.clone(), x.clone());
    let (mut tr, mut ti) = (vec![0.0; n], vec![0.0; n]);
    match which {
        "scalar" => {
            let f = FftPlannerScalar::<f64>::new().plan_fft_forward(n);
            let mut buf: Vec<Complex<f64>> = x.iter().map(|&v| Complex::new(v, v)).collect();
            let mut s = vec![Complex::new(0.0, 0.0); f.get_inplace_scratch_len()];
            for _ in 0..reps {
                f.process_with_scratch(&mut buf, &mut s);
                black_box(&buf);
            }
        }
        _ => {
            let f = if which == "base" {
                Fft::baseline(n)
            } else {
                Fft::new(n)
            };
            for _ in 0..reps {
                f.forward((&mut re, &mut im), (&mut tr, &mut ti));
                black_box(&re);
            }
        }
    }
}
