use noisewright::synth::{Design, Shaper};
use std::time::Instant;
fn main() {
    let lo: f64 = std::env::args()
        .nth(1)
        .map(|s| s.parse().unwrap())
        .unwrap_or(0.1);
    let target = move |f: f64| {
        if f >= lo {
            16e-18 * (1.0 + 100.0 / f)
        } else {
            0.0
        }
    };
    let t = Instant::now();
    let d = Design::new(&target, 48_000.0, lo).unwrap();
    println!(
        "design: {} levels in {:.3} s, variance {:e}",
        d.levels().len(),
        t.elapsed().as_secs_f64(),
        d.variance()
    );
    // Second argument: threads (default 2). The shaper runs on a worker of the pool, as
    // `generate` does; from outside a pool every parallel step would be a hand-off.
    let threads: usize = std::env::args()
        .nth(2)
        .map(|s| s.parse().unwrap())
        .unwrap_or(2);
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap();
    pool.install(|| {
        let mut s = Shaper::new(&d, 1);
        let mut buf = vec![0.0; 1 << 16];
        let n = 1 << 24;
        let t = Instant::now();
        let mut acc = 0.0;
        for _ in 0..n / buf.len() {
            s.fill(&mut buf);
            acc += buf.iter().map(|x| x * x).sum::<f64>();
        }
        let dt = t.elapsed().as_secs_f64();
        println!(
            "{:.1} M samples/s, measured var {:e}",
            n as f64 / dt / 1e6,
            acc / n as f64
        );
    });
}
