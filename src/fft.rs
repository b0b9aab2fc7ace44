//! A complex f64 FFT for power-of-two lengths whose results are the same, bit for bit, on
//! every machine.
//!
//! [`Fft::new`] plans a length once (twiddles and the sequence of stages); the transforms then
//! work on split arrays, real parts in one slice and imaginary parts in another, with caller
//! owned scratch of [`Fft::len`] samples per part. Conventions:
//!
//! - forward: `X[k] = Σ_n x[n]·e^(−2πi·nk/N)`; inverse: `x[n] = Σ_k X[k]·e^(+2πi·nk/N)`;
//!   neither is normalised, so an inverse after a forward gives `N·x`;
//! - bins in natural order, `X[0]` is DC.
//!
//! ```
//! use noisewright::fft::Fft;
//!
//! let fft = Fft::new(8);
//! // An impulse at n = 1: X[k] = e^(−2πi·k/8).
//! let (mut re, mut im) = (vec![0.0; 8], vec![0.0; 8]);
//! re[1] = 1.0;
//! let (mut sr, mut si) = (vec![0.0; 8], vec![0.0; 8]);
//! fft.forward((&mut re, &mut im), (&mut sr, &mut si));
//! assert!(re[2].abs() < 1e-15 && (im[2] + 1.0).abs() < 1e-15);
//! fft.inverse((&mut re, &mut im), (&mut sr, &mut si));
//! assert!((re[1] - 8.0).abs() < 1e-14 && re[0].abs() < 1e-14); // unnormalised: N·x
//! ```
//!
//! # Why the bits do not depend on the machine
//!
//! - **One expression per output.** The algorithm is a Stockham (self-sorting) radix-4 FFT with
//!   one radix-2 pass when log2 N is odd. The passes run in stages of two radix-4 passes (the
//!   last stage may hold one radix-4 pass, the radix-2 pass or both), each stage reading every
//!   sample once and writing it once, the values between its passes kept in registers. Every
//!   stage is a loop whose body uses only IEEE `+`, `−` and `×` on f64, applied to eight
//!   lanes at once (one lane for lengths too short for eight): portable arrays in the baseline
//!   copy (the compiler picks SSE2), AVX2 intrinsics in a copy chosen at run time, the same
//!   IEEE operation in every lane. So each lane performs exactly the scalar operations, in the
//!   same order. Rust never contracts `a·b + c` into a fused multiply-add and has no fast-math
//!   mode, and `mul_add` is not used, so a wider vector or an FMA-capable CPU cannot change a
//!   result. Which code runs for a stage depends only on N, never on the CPU; the tests
//!   `the_avx2_path_gives_the_same_bits_as_the_baseline` and
//!   `every_path_gives_the_bits_of_the_defining_scalar_sequence` check it.
//! - **Twiddles from basic operations.** The platform's `sin`/`cos` may differ in the last bit
//!   between libraries, so the twiddle table is computed here: `sin` and `cos` of angles up to
//!   π/4 from their Taylor series in Horner form (coefficients by IEEE division), 1/√2 at π/4,
//!   the other octants by exact symmetries. Error below 2 ulp of 1 (tested against
//!   `f64::sin_cos`).
//!
//! The inverse is the forward transform with the real and imaginary arrays exchanged at input
//! and output (exchanging them is `z ↦ i·conj(z)`, and `F(i·conj(x)) = i·conj(F⁻¹(x))` for the
//! unnormalised inverse `F⁻¹`), so it needs no second table and has the same error.
//!
//! Round-off: for N = 2^t the relative error `‖ŷ − y‖₂/‖y‖₂` of a Cooley–Tukey FFT is at most
//! `tη/(1 − tη)` with `η = μ + γ₄(√2 + μ)`, `γ₄ = 4u/(1 − 4u)`, `u = 2⁻⁵³` and `μ` the twiddle
//! error (N. J. Higham, *Accuracy and Stability of Numerical Algorithms*, 2nd ed., SIAM 2002,
//! §24.1, Theorem 24.2); the tests hold this FFT to that bound.

/// Lanes of the wide kernels: eight f64 samples per load or store of one part, 64 bytes (a
/// cache line when aligned); two AVX2 registers, four SSE2 registers in the baseline copy.
/// The baseline copy was also tried on two and four lanes: faster at 2048 points, slower at
/// 8192, the length the engine transforms most.
const L: usize = 8;

/// A planned FFT of one power-of-two length.
#[derive(Debug, Clone)]
pub struct Fft {
    len: usize,
    stages: Vec<Stage>,
    isa: Isa,
}

/// Which compiled copy of the (identical) stage code runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Isa {
    Baseline,
    #[cfg(target_arch = "x86_64")]
    Avx2,
}

/// What a stage does: one sweep over the data, one load and one store of every sample, with
/// one or two passes done in registers in between.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    /// The first two radix-4 passes (strides 1 and 4): lanes run over consecutive
    /// butterflies.
    FirstPair,
    /// Two radix-4 passes of strides s and 4s (s ≥ 16): lanes run over the stride.
    Pair,
    /// The radix-4 pass of length 4, last (even log2 N with an odd number of radix-4 passes).
    Four,
    /// The radix-4 pass of length 8 and the radix-2 pass after it (odd log2 N).
    Eight,
    /// The radix-2 pass alone, last (odd log2 N with an even number of radix-4 passes).
    Two,
}

/// One sweep over the data, planned: its kind, sizes and twiddles.
#[derive(Debug, Clone)]
struct Stage {
    kind: Kind,
    /// Length in samples of the sub-transforms the stage's first pass splits.
    n: usize,
    /// Stride in samples of the stage's first pass: N / n.
    s: usize,
    /// Whether the kernel runs on [`L`] lanes (else on one: lengths too short for `L`).
    wide: bool,
    /// Twiddles in the order the stage reads them (see [`pair_twiddles`]; [`Kind::Four`] and
    /// [`Kind::Eight`]: re, im of `W^(mp)` for p = 0 (m = 1..3), then p = 1 (m = 1..3)).
    tw: Vec<f64>,
}

impl Fft {
    /// Plan the FFT of `len` complex samples, using AVX2 where the CPU has it (same results).
    ///
    /// # Panics
    /// If `len` is not a power of two.
    pub fn new(len: usize) -> Fft {
        let mut fft = Fft::baseline(len);
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            fft.isa = Isa::Avx2;
        }
        fft
    }

    /// The same plan that never uses the run-time-selected AVX2 copy of the code: for tests and
    /// comparisons. Its results are identical to [`Fft::new`]'s.
    ///
    /// # Panics
    /// If `len` is not a power of two.
    pub fn baseline(len: usize) -> Fft {
        assert!(
            len.is_power_of_two(),
            "FFT length {len} is not a power of two"
        );
        let (cos, sin) = unit_circle(len);
        let log2 = len.trailing_zeros();
        let mut radix4 = log2 / 2;
        let odd = log2 % 2 == 1;
        let mut stages = Vec::new();
        let mut n = len;
        while radix4 >= 2 {
            let s = len / n;
            let (kind, wide) = if s == 1 {
                (Kind::FirstPair, n / 16 % L == 0)
            } else {
                (Kind::Pair, s % L == 0)
            };
            let width = if kind == Kind::FirstPair && wide {
                L
            } else {
                1
            };
            let tw = pair_twiddles(n, s, width, &cos, &sin);
            stages.push(Stage {
                kind,
                n,
                s,
                wide,
                tw,
            });
            n /= 16;
            radix4 -= 2;
        }
        if radix4 == 1 || odd {
            let s = len / n;
            let kind = match (radix4 == 1, odd) {
                (true, true) => Kind::Eight,
                (true, false) => Kind::Four,
                _ => Kind::Two,
            };
            // W^(mp) for p = 0 and 1 (p = 1 only exists for n = 8): W_n^k = W_N^(ks).
            let mut tw = Vec::new();
            if kind != Kind::Two {
                for p in 0..n / 4 {
                    for m in 1..=3 {
                        tw.push(cos[m * p * s]);
                        tw.push(-sin[m * p * s]);
                    }
                }
            }
            stages.push(Stage {
                kind,
                n,
                s,
                wide: s % L == 0,
                tw,
            });
        }
        Fft {
            len,
            stages,
            isa: Isa::Baseline,
        }
    }

    /// Transform length N in complex samples; also the length of every slice the transforms
    /// take (input, output and scratch, real and imaginary parts alike).
    pub fn len(&self) -> usize {
        self.len
    }

    /// Always false: a plan has at least one sample.
    pub fn is_empty(&self) -> bool {
        false
    }

    /// Forward transform of (`in_re`, `in_im`) into (`out_re`, `out_im`); the input is kept.
    /// `scratch_re` and `scratch_im` are overwritten.
    ///
    /// # Panics
    /// If any slice's length is not [`Fft::len`].
    pub fn forward_into(
        &self,
        input: (&[f64], &[f64]),
        out: (&mut [f64], &mut [f64]),
        scratch: (&mut [f64], &mut [f64]),
    ) {
        self.run(Some(input), out, scratch);
    }

    /// Forward transform of (`re`, `im`) in place; `scratch` is overwritten.
    ///
    /// # Panics
    /// If any slice's length is not [`Fft::len`].
    pub fn forward(&self, data: (&mut [f64], &mut [f64]), scratch: (&mut [f64], &mut [f64])) {
        self.run(None, data, scratch);
    }

    /// Inverse (unnormalised) transform of `input` into `out`; the input is kept.
    ///
    /// # Panics
    /// If any slice's length is not [`Fft::len`].
    pub fn inverse_into(
        &self,
        input: (&[f64], &[f64]),
        out: (&mut [f64], &mut [f64]),
        scratch: (&mut [f64], &mut [f64]),
    ) {
        self.run(
            Some((input.1, input.0)),
            (out.1, out.0),
            (scratch.1, scratch.0),
        );
    }

    /// Inverse (unnormalised) transform in place; `scratch` is overwritten.
    ///
    /// # Panics
    /// If any slice's length is not [`Fft::len`].
    pub fn inverse(&self, data: (&mut [f64], &mut [f64]), scratch: (&mut [f64], &mut [f64])) {
        self.run(None, (data.1, data.0), (scratch.1, scratch.0));
    }

    /// Inverse (unnormalised) transform of `data`, of which only samples `skip..N` are
    /// wanted: they go to `tail` (real parts, imaginary parts, N − `skip` each), bit for bit
    /// what [`Fft::inverse`] leaves in `data[skip..]`. `data` and `scratch` are overwritten.
    /// Where the plan's last stage can store the tail itself (the radix-2 last stage of
    /// N = 2^(4k+1), such as 8192, with `skip` ≤ N/2 a multiple of eight) this saves the copy;
    /// otherwise it transforms in place and copies.
    ///
    /// # Panics
    /// If `data` or `scratch` is not [`Fft::len`] long, `skip` > N or `tail` not N − `skip`.
    pub fn inverse_tail(
        &self,
        data: (&mut [f64], &mut [f64]),
        scratch: (&mut [f64], &mut [f64]),
        skip: usize,
        tail: (&mut [f64], &mut [f64]),
    ) {
        if self.tail_fits(skip) {
            let tail = Some((skip, tail.1, tail.0));
            self.run_tail(None, (data.1, data.0), (scratch.1, scratch.0), tail);
        } else {
            self.inverse((&mut *data.0, &mut *data.1), scratch);
            tail.0.copy_from_slice(&data.0[skip..]);
            tail.1.copy_from_slice(&data.1[skip..]);
        }
    }

    /// Whether the last stage can store outputs `skip..N` directly: a radix-2 last stage
    /// (N = 2^(4k+1): 2, 32, 512, 8192, …) and `skip` ≤ N/2 a multiple of its lanes.
    fn tail_fits(&self, skip: usize) -> bool {
        self.stages.last().is_some_and(|st| {
            let lanes = if st.wide { L } else { 1 };
            st.kind == Kind::Two && skip <= st.s && skip % lanes == 0
        })
    }

    /// Run the stages. Every stage but the last reads one buffer and writes the other; the last
    /// writes `out`, in place if the data is already there (it completes the transform, so it
    /// reads exactly the samples it writes). Out of place, stage k writes `out` when an even
    /// number of stages follow it, so the input is never written; in place, the stages
    /// alternate `out` → `tmp` → `out` …. No copy is needed except for N = 1.
    fn run(
        &self,
        input: Option<(&[f64], &[f64])>,
        out: (&mut [f64], &mut [f64]),
        tmp: (&mut [f64], &mut [f64]),
    ) {
        self.run_tail(input, out, tmp, None);
    }

    /// [`Fft::run`], but with `tail` = (skip, re, im) the last stage, which must be a
    /// [`Kind::Two`] that allows `skip` ([`Fft::tail_fits`]), writes outputs skip..N there
    /// instead of into `out`.
    fn run_tail(
        &self,
        input: Option<(&[f64], &[f64])>,
        out: (&mut [f64], &mut [f64]),
        tmp: (&mut [f64], &mut [f64]),
        tail: Option<(usize, &mut [f64], &mut [f64])>,
    ) {
        let n = self.len;
        let (out_re, out_im) = out;
        let (tmp_re, tmp_im) = tmp;
        assert!(
            out_re.len() == n && out_im.len() == n && tmp_re.len() == n && tmp_im.len() == n,
            "FFT of length {n}: output and scratch slices must have {n} samples"
        );
        if let Some((r, i)) = input {
            assert!(
                r.len() == n && i.len() == n,
                "FFT of length {n}: input slices must have {n} samples"
            );
        }
        let count = self.stages.len();
        if count == 0 {
            if let Some((r, i)) = input {
                out_re.copy_from_slice(r);
                out_im.copy_from_slice(i);
            }
            return;
        }
        let out = Dst {
            re: out_re.as_mut_ptr(),
            im: out_im.as_mut_ptr(),
        };
        let tmp = Dst {
            re: tmp_re.as_mut_ptr(),
            im: tmp_im.as_mut_ptr(),
        };
        let (skip, tail) = match tail {
            Some((skip, re, im)) => {
                assert!(
                    self.tail_fits(skip) && re.len() == n - skip && im.len() == n - skip,
                    "FFT of length {n}: no direct tail from {skip}, or tail slices not N − skip"
                );
                let to = Dst {
                    re: re.as_mut_ptr(),
                    im: im.as_mut_ptr(),
                };
                (skip, Some(to))
            }
            None => (0, None),
        };
        let mut from = match input {
            Some((r, i)) => Src {
                re: r.as_ptr(),
                im: i.as_ptr(),
            },
            None => out.src(),
        };
        for (k, stage) in self.stages.iter().enumerate() {
            let last = k + 1 == count;
            let to_out = last
                || if input.is_some() {
                    (count - 1 - k) % 2 == 0
                } else {
                    k % 2 == 1
                };
            let to = match tail {
                Some(t) if last => t,
                _ if to_out => out,
                _ => tmp,
            };
            let skip = if last { skip } else { 0 };
            // SAFETY: all pointers come from slices checked above (N samples, the tail
            // N − skip with `tail_fits`); `from` and `to` are different buffers except for
            // the last stage in place, which `Stage::apply` allows; the input is only read.
            unsafe { stage.apply(self.isa, from, to, skip) };
            from = to.src();
        }
    }
}

/// Where a stage reads: N real and N imaginary parts.
#[derive(Clone, Copy)]
struct Src {
    re: *const f64,
    im: *const f64,
}

/// Where a stage writes: N real and N imaginary parts.
#[derive(Clone, Copy)]
struct Dst {
    re: *mut f64,
    im: *mut f64,
}

impl Dst {
    fn src(self) -> Src {
        Src {
            re: self.re,
            im: self.im,
        }
    }
}

impl Stage {
    /// Runs the stage from `x` into `y`. `skip` is 0, except on a [`Kind::Two`] stage that
    /// writes only outputs `skip..N`, `y` pointing at output `skip` (see [`Fft::inverse_tail`]).
    ///
    /// # Safety
    /// `x` must be valid for reading N samples per part and `y` for writing N − `skip`; they
    /// either do not overlap or, for the last stage only, are equal (in place). A nonzero
    /// `skip` is at most N/2 and a multiple of the stage's lanes.
    unsafe fn apply(&self, isa: Isa, x: Src, y: Dst, skip: usize) {
        match isa {
            // SAFETY: as required of the caller; the portable lanes need no CPU feature.
            Isa::Baseline if self.wide => unsafe { self.run::<Portable<L>>(x, y, skip) },
            Isa::Baseline => unsafe { self.run::<f64>(x, y, skip) },
            // SAFETY: `Isa::Avx2` is only chosen after `is_x86_feature_detected!("avx2")`.
            #[cfg(target_arch = "x86_64")]
            Isa::Avx2 => unsafe { self.apply_avx2(x, y, skip) },
        }
    }

    /// The stage code compiled for AVX2, on [`avx::Avx`] lanes (not FMA: no contraction
    /// happens either way, see the module docs).
    ///
    /// # Safety
    /// As [`Stage::apply`], and the CPU must have AVX2.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn apply_avx2(&self, x: Src, y: Dst, skip: usize) {
        if self.wide {
            // SAFETY: as required of the caller, who promises the AVX2 that `Avx` needs.
            unsafe { self.run::<Twice<avx::Avx>>(x, y, skip) }
        } else {
            // SAFETY: as required of the caller.
            unsafe { self.run::<f64>(x, y, skip) }
        }
    }

    /// # Safety
    /// As [`Stage::apply`], the CPU having `V`'s features, and `V::W` lanes fitting the
    /// stage (`wide` chosen it).
    #[inline(always)]
    unsafe fn run<V: Lanes>(&self, x: Src, y: Dst, skip: usize) {
        let (n, s, tw) = (self.n, self.s, &self.tw[..]);
        debug_assert!(skip == 0 || (self.kind == Kind::Two && skip <= s && skip % V::W == 0));
        // SAFETY (all arms): the plan built `tw` for this stage with `V::W` lanes; the index
        // bounds are derived beside each kernel.
        unsafe {
            match self.kind {
                Kind::FirstPair => first_pair::<V>(n, tw, x, y),
                Kind::Pair => pair::<V>(n, s, tw, x, y),
                Kind::Four => four::<V>(s, tw, x, y),
                Kind::Eight => eight::<V>(s, tw, x, y),
                Kind::Two => two::<V>(s, skip, x, y),
            }
        }
    }
}

/// Twiddles of a [`Kind::FirstPair`] or [`Kind::Pair`] stage (first pass length `n`, stride
/// `s`, q = n/16), in reading order: for each group of `width` consecutive p' < q, fifteen
/// complex factors, each as `width` real parts then `width` imaginary parts (lane l for
/// p' + l): first `W_n^(m·p)` with p = p' + r'·q for r' = 0..3 and m = 1..3 (the first pass),
/// then `W_(n/4)^(m'·p')` for m' = 1..3 (the second pass). `W_n^k = W_N^(k·s)`.
fn pair_twiddles(n: usize, s: usize, width: usize, cos: &[f64], sin: &[f64]) -> Vec<f64> {
    let q = n / 16;
    let mut tw = Vec::with_capacity(30 * q);
    for g in (0..q).step_by(width) {
        for i in 0..15 {
            let k = |l: usize| {
                let pp = g + l;
                if i < 12 {
                    let (r, m) = (i / 3, i % 3 + 1);
                    m * (pp + r * q) * s
                } else {
                    (i - 11) * pp * 4 * s
                }
            };
            tw.extend((0..width).map(|l| cos[k(l)]));
            tw.extend((0..width).map(|l| -sin[k(l)]));
        }
    }
    tw
}

/// A group of `W` f64 lanes; every operation works lane by lane with the scalar IEEE
/// operation, so a result never depends on `W` or on the implementation.
///
/// The implementations' safe operations need the CPU features of the type; a value can only
/// be made by the `unsafe` constructors, whose callers promise those features.
trait Lanes: Copy {
    /// Number of lanes.
    const W: usize;
    /// # Safety
    /// `p` valid for reading `W` f64; the CPU has the type's features.
    unsafe fn load(p: *const f64) -> Self;
    /// `*p` in every lane.
    /// # Safety
    /// As [`Lanes::load`], for one f64.
    unsafe fn splat(p: *const f64) -> Self;
    /// # Safety
    /// `p` valid for writing `W` f64.
    unsafe fn store(self, p: *mut f64);
    /// For each lane l, `(v[0][l], v[1][l], v[2][l], v[3][l])` to `p + l·stride ..`.
    /// # Safety
    /// Those `4·W` f64 valid for writing.
    unsafe fn store_columns(v: [Self; 4], p: *mut f64, stride: usize);
    fn add(self, b: Self) -> Self;
    fn sub(self, b: Self) -> Self;
    fn mul(self, b: Self) -> Self;
    /// Lane 0 of `first`, the other lanes of `self`.
    fn with_first_lane_of(self, first: Self) -> Self;
}

/// One lane: plain scalar code (short lengths).
impl Lanes for f64 {
    const W: usize = 1;
    #[inline(always)]
    unsafe fn load(p: *const f64) -> Self {
        // SAFETY: as required of the caller.
        unsafe { *p }
    }
    #[inline(always)]
    unsafe fn splat(p: *const f64) -> Self {
        // SAFETY: as required of the caller.
        unsafe { *p }
    }
    #[inline(always)]
    unsafe fn store(self, p: *mut f64) {
        // SAFETY: as required of the caller.
        unsafe { *p = self }
    }
    #[inline(always)]
    unsafe fn store_columns(v: [Self; 4], p: *mut f64, _stride: usize) {
        // SAFETY: as required of the caller.
        unsafe { p.cast::<[f64; 4]>().write_unaligned(v) }
    }
    #[inline(always)]
    fn add(self, b: Self) -> Self {
        self + b
    }
    #[inline(always)]
    fn sub(self, b: Self) -> Self {
        self - b
    }
    #[inline(always)]
    fn mul(self, b: Self) -> Self {
        self * b
    }
    #[inline(always)]
    fn with_first_lane_of(self, first: Self) -> Self {
        first
    }
}

/// `K` lanes in portable code (the baseline copy; the compiler picks SSE2 or scalars).
#[derive(Clone, Copy)]
struct Portable<const K: usize>([f64; K]);

impl<const K: usize> Portable<K> {
    #[inline(always)]
    fn map(a: Self, b: Self, f: impl Fn(f64, f64) -> f64) -> Self {
        Portable(std::array::from_fn(|l| f(a.0[l], b.0[l])))
    }
}

impl<const K: usize> Lanes for Portable<K> {
    const W: usize = K;
    #[inline(always)]
    unsafe fn load(p: *const f64) -> Self {
        // SAFETY: as required of the caller.
        Portable(unsafe { p.cast::<[f64; K]>().read_unaligned() })
    }
    #[inline(always)]
    unsafe fn splat(p: *const f64) -> Self {
        // SAFETY: as required of the caller.
        Portable([unsafe { *p }; K])
    }
    #[inline(always)]
    unsafe fn store(self, p: *mut f64) {
        // SAFETY: as required of the caller.
        unsafe { p.cast::<[f64; K]>().write_unaligned(self.0) }
    }
    #[inline(always)]
    unsafe fn store_columns(v: [Self; 4], p: *mut f64, stride: usize) {
        for l in 0..K {
            let column = [v[0].0[l], v[1].0[l], v[2].0[l], v[3].0[l]];
            // SAFETY: as required of the caller.
            unsafe { p.add(l * stride).cast::<[f64; 4]>().write_unaligned(column) }
        }
    }
    #[inline(always)]
    fn add(self, b: Self) -> Self {
        Portable::map(self, b, |x, y| x + y)
    }
    #[inline(always)]
    fn sub(self, b: Self) -> Self {
        Portable::map(self, b, |x, y| x - y)
    }
    #[inline(always)]
    fn mul(self, b: Self) -> Self {
        Portable::map(self, b, |x, y| x * y)
    }
    #[inline(always)]
    fn with_first_lane_of(self, first: Self) -> Self {
        let mut v = self.0;
        v[0] = first.0[0];
        Portable(v)
    }
}

/// Two groups of lanes side by side: the [`L`] lanes of the AVX2 copy from two four-lane
/// registers.
#[derive(Clone, Copy)]
struct Twice<V>([V; 2]);

impl<V: Lanes> Lanes for Twice<V> {
    const W: usize = 2 * V::W;
    #[inline(always)]
    unsafe fn load(p: *const f64) -> Self {
        // SAFETY: as required of the caller.
        unsafe { Twice([V::load(p), V::load(p.add(V::W))]) }
    }
    #[inline(always)]
    unsafe fn splat(p: *const f64) -> Self {
        // SAFETY: as required of the caller.
        let v = unsafe { V::splat(p) };
        Twice([v, v])
    }
    #[inline(always)]
    unsafe fn store(self, p: *mut f64) {
        // SAFETY: as required of the caller.
        unsafe {
            self.0[0].store(p);
            self.0[1].store(p.add(V::W));
        }
    }
    #[inline(always)]
    unsafe fn store_columns(v: [Self; 4], p: *mut f64, stride: usize) {
        // SAFETY: as required of the caller.
        unsafe {
            V::store_columns([v[0].0[0], v[1].0[0], v[2].0[0], v[3].0[0]], p, stride);
            let p = p.add(V::W * stride);
            V::store_columns([v[0].0[1], v[1].0[1], v[2].0[1], v[3].0[1]], p, stride);
        }
    }
    #[inline(always)]
    fn add(self, b: Self) -> Self {
        Twice([self.0[0].add(b.0[0]), self.0[1].add(b.0[1])])
    }
    #[inline(always)]
    fn sub(self, b: Self) -> Self {
        Twice([self.0[0].sub(b.0[0]), self.0[1].sub(b.0[1])])
    }
    #[inline(always)]
    fn mul(self, b: Self) -> Self {
        Twice([self.0[0].mul(b.0[0]), self.0[1].mul(b.0[1])])
    }
    #[inline(always)]
    fn with_first_lane_of(self, first: Self) -> Self {
        Twice([self.0[0].with_first_lane_of(first.0[0]), self.0[1]])
    }
}

#[cfg(target_arch = "x86_64")]
mod avx {
    use super::Lanes;
    use std::arch::x86_64::*;

    /// Four lanes in one AVX register. Only made by `load` and `splat`, whose callers promise
    /// AVX2, so holding one proves the CPU has it; that makes the arithmetic safe.
    #[derive(Clone, Copy)]
    pub(super) struct Avx(__m256d);

    impl Lanes for Avx {
        const W: usize = 4;
        #[inline(always)]
        unsafe fn load(p: *const f64) -> Self {
            // SAFETY: as required of the caller.
            Avx(unsafe { _mm256_loadu_pd(p) })
        }
        #[inline(always)]
        unsafe fn splat(p: *const f64) -> Self {
            // SAFETY: as required of the caller.
            Avx(unsafe { _mm256_broadcast_sd(&*p) })
        }
        #[inline(always)]
        unsafe fn store(self, p: *mut f64) {
            // SAFETY: as required of the caller.
            unsafe { _mm256_storeu_pd(p, self.0) }
        }
        #[inline(always)]
        unsafe fn store_columns(v: [Self; 4], p: *mut f64, stride: usize) {
            // SAFETY: as required of the caller; the shuffles only move lanes.
            unsafe {
                let t0 = _mm256_unpacklo_pd(v[0].0, v[1].0); // a0 b0 a2 b2
                let t1 = _mm256_unpackhi_pd(v[0].0, v[1].0); // a1 b1 a3 b3
                let t2 = _mm256_unpacklo_pd(v[2].0, v[3].0); // c0 d0 c2 d2
                let t3 = _mm256_unpackhi_pd(v[2].0, v[3].0); // c1 d1 c3 d3
                _mm256_storeu_pd(p, _mm256_permute2f128_pd::<0x20>(t0, t2));
                _mm256_storeu_pd(p.add(stride), _mm256_permute2f128_pd::<0x20>(t1, t3));
                _mm256_storeu_pd(p.add(2 * stride), _mm256_permute2f128_pd::<0x31>(t0, t2));
                _mm256_storeu_pd(p.add(3 * stride), _mm256_permute2f128_pd::<0x31>(t1, t3));
            }
        }
        #[inline(always)]
        fn add(self, b: Self) -> Self {
            // SAFETY: a value of `Avx` exists only where the CPU has AVX2 (type docs).
            Avx(unsafe { _mm256_add_pd(self.0, b.0) })
        }
        #[inline(always)]
        fn sub(self, b: Self) -> Self {
            // SAFETY: as in `add`.
            Avx(unsafe { _mm256_sub_pd(self.0, b.0) })
        }
        #[inline(always)]
        fn mul(self, b: Self) -> Self {
            // SAFETY: as in `add`.
            Avx(unsafe { _mm256_mul_pd(self.0, b.0) })
        }
        #[inline(always)]
        fn with_first_lane_of(self, first: Self) -> Self {
            // SAFETY: as in `add`.
            Avx(unsafe { _mm256_blend_pd::<0b0001>(self.0, first.0) })
        }
    }
}

/// A complex value per lane.
#[derive(Clone, Copy)]
struct Cx<V> {
    re: V,
    im: V,
}

impl<V: Lanes> Cx<V> {
    /// # Safety
    /// Sample `k` (and the `V::W − 1` after it) inside `x`'s N samples; CPU features of `V`.
    #[inline(always)]
    unsafe fn load(x: Src, k: usize) -> Self {
        // SAFETY: as required of the caller.
        unsafe {
            Cx {
                re: V::load(x.re.add(k)),
                im: V::load(x.im.add(k)),
            }
        }
    }

    /// Twiddle `i` of a table with scalar entries (re, im at 2i, 2i + 1), in every lane.
    /// # Safety
    /// `w` valid for 2i + 2 reads; CPU features of `V`.
    #[inline(always)]
    unsafe fn splat(w: *const f64, i: usize) -> Self {
        // SAFETY: as required of the caller.
        unsafe {
            Cx {
                re: V::splat(w.add(2 * i)),
                im: V::splat(w.add(2 * i + 1)),
            }
        }
    }

    /// Twiddle `i` of a table with lane entries (`W` re, then `W` im).
    /// # Safety
    /// `w` valid for (2i + 2)·W reads; CPU features of `V`.
    #[inline(always)]
    unsafe fn lanes(w: *const f64, i: usize) -> Self {
        // SAFETY: as required of the caller.
        unsafe {
            Cx {
                re: V::load(w.add(2 * i * V::W)),
                im: V::load(w.add((2 * i + 1) * V::W)),
            }
        }
    }

    /// # Safety
    /// Sample `k` (and the `V::W − 1` after it) inside `y`'s N samples.
    #[inline(always)]
    unsafe fn store(self, y: Dst, k: usize) {
        // SAFETY: as required of the caller.
        unsafe {
            self.re.store(y.re.add(k));
            self.im.store(y.im.add(k));
        }
    }

    #[inline(always)]
    fn add(self, b: Self) -> Self {
        Cx {
            re: self.re.add(b.re),
            im: self.im.add(b.im),
        }
    }

    #[inline(always)]
    fn sub(self, b: Self) -> Self {
        Cx {
            re: self.re.sub(b.re),
            im: self.im.sub(b.im),
        }
    }

    /// Complex product `w·self = (wr + i·wi)(xr + i·xi)`, in one fixed order.
    #[inline(always)]
    fn times(self, w: Self) -> Self {
        Cx {
            re: w.re.mul(self.re).sub(w.im.mul(self.im)),
            im: w.re.mul(self.im).add(w.im.mul(self.re)),
        }
    }
}

/// The radix-4 butterfly of a forward DFT without twiddles: inputs a, b, c, d give the four
/// outputs `a + b + c + d`, `a − ib − c + id`, `a − b + c − d`, `a + ib − c − id`, each from
/// `a ± c` and `b ± d`.
#[inline(always)]
fn butterfly4<V: Lanes>([a, b, c, d]: [Cx<V>; 4]) -> [Cx<V>; 4] {
    let apc = a.add(c);
    let amc = a.sub(c);
    let bpd = b.add(d);
    let bmd = b.sub(d);
    [
        apc.add(bpd),
        Cx {
            re: amc.re.add(bmd.im),
            im: amc.im.sub(bmd.re),
        },
        apc.sub(bpd),
        Cx {
            re: amc.re.sub(bmd.im),
            im: amc.im.add(bmd.re),
        },
    ]
}

/// Four complex samples `x[k], x[k + step], x[k + 2·step], x[k + 3·step]`.
///
/// # Safety
/// All four (and the `V::W − 1` samples after each) inside `x`'s N samples; CPU features of
/// `V`.
#[inline(always)]
unsafe fn load4<V: Lanes>(x: Src, k: usize, step: usize) -> [Cx<V>; 4] {
    // SAFETY: as required of the caller.
    unsafe {
        [
            Cx::load(x, k),
            Cx::load(x, k + step),
            Cx::load(x, k + 2 * step),
            Cx::load(x, k + 3 * step),
        ]
    }
}

/// Scalar twiddles `i, i + 1, i + 2` of `w`, each in every lane.
///
/// # Safety
/// As [`Cx::splat`] for i + 2.
#[inline(always)]
unsafe fn splat3<V: Lanes>(w: *const f64, i: usize) -> [Cx<V>; 3] {
    // SAFETY: as required of the caller.
    unsafe { [Cx::splat(w, i), Cx::splat(w, i + 1), Cx::splat(w, i + 2)] }
}

/// Lane twiddles `i, i + 1, i + 2` of `w`.
///
/// # Safety
/// As [`Cx::lanes`] for i + 2.
#[inline(always)]
unsafe fn lanes3<V: Lanes>(w: *const f64, i: usize) -> [Cx<V>; 3] {
    // SAFETY: as required of the caller.
    unsafe { [Cx::lanes(w, i), Cx::lanes(w, i + 1), Cx::lanes(w, i + 2)] }
}

/// Butterfly outputs 1..3 multiplied by `w[0..3]`, output 0 as it is.
#[inline(always)]
fn twiddle3<V: Lanes>(b: [Cx<V>; 4], w: [Cx<V>; 3]) -> [Cx<V>; 4] {
    [b[0], b[1].times(w[0]), b[2].times(w[1]), b[3].times(w[2])]
}

/// [`twiddle3`] in every lane but lane 0, which keeps `b` (the p = 0 that is not multiplied).
#[inline(always)]
fn twiddle3_but_lane0<V: Lanes>(b: [Cx<V>; 4], w: [Cx<V>; 3]) -> [Cx<V>; 4] {
    let t = twiddle3(b, w);
    let keep = |t: Cx<V>, b: Cx<V>| Cx {
        re: t.re.with_first_lane_of(b.re),
        im: t.im.with_first_lane_of(b.im),
    };
    [b[0], keep(t[1], b[1]), keep(t[2], b[2]), keep(t[3], b[3])]
}

/// `b[i]` to `y[k + i·step]`.
///
/// # Safety
/// As [`Cx::store`] for the four samples.
#[inline(always)]
unsafe fn store4<V: Lanes>(b: [Cx<V>; 4], y: Dst, k: usize, step: usize) {
    // SAFETY: as required of the caller.
    unsafe {
        b[0].store(y, k);
        b[1].store(y, k + step);
        b[2].store(y, k + 2 * step);
        b[3].store(y, k + 3 * step);
    }
}

/// Lane l of `a, b, c, d` to `y[k + 16·l .. k + 16·l + 4]`.
///
/// # Safety
/// As [`Lanes::store_columns`] for both parts.
#[inline(always)]
unsafe fn store_columns16<V: Lanes>(a: Cx<V>, b: Cx<V>, c: Cx<V>, d: Cx<V>, y: Dst, k: usize) {
    // SAFETY: as required of the caller.
    unsafe {
        V::store_columns([a.re, b.re, c.re, d.re], y.re.add(k), 16);
        V::store_columns([a.im, b.im, c.im, d.im], y.im.add(k), 16);
    }
}

/// The first two radix-4 passes over length n (strides 1 and 4), `V::W` consecutive p' < n/16
/// per step. Pass 1: `t[4p + m] = W_n^(mp)·B_m(x[p + r·n/4])` for every p (the first pass
/// multiplies at p = 0 too); pass 2: `y[4(4p' + m') + m] = W_(n/4)^(m'p')·B_m'(t[4(p' +
/// r'·n/16) + m])` except at p' = 0; t lives in registers: for p = p' + r'·n/16 the samples
/// read are `x[p' + (r' + 4r)·n/16]`, and the outputs of one p' are 16 consecutive samples.
///
/// # Safety
/// As [`Stage::apply`]; n/16 a multiple of `V::W`, `tw` from [`pair_twiddles`] with width
/// `V::W`. Indices: read p' + 15·n/16 + V::W − 1 < n, written 16p' + 15 + 16(V::W − 1) < n.
#[inline(always)]
unsafe fn first_pair<V: Lanes>(n: usize, tw: &[f64], x: Src, y: Dst) {
    let q = n / 16;
    debug_assert!(q % V::W == 0 && tw.len() == 30 * q);
    let mut g = 0;
    while g < q {
        let w = tw[30 * g..30 * (g + V::W)].as_ptr();
        // SAFETY: the bounds above.
        unsafe {
            if g == 0 {
                first_pair_step::<V, true>(q, w, x, y, g);
            } else {
                first_pair_step::<V, false>(q, w, x, y, g);
            }
        }
        g += V::W;
    }
}

/// One step of [`first_pair`]: p' = g .. g + V::W; `ZERO` when p' = 0 is lane 0.
///
/// # Safety
/// As [`first_pair`], `w` the step's 30·V::W twiddles.
#[inline(always)]
unsafe fn first_pair_step<V: Lanes, const ZERO: bool>(
    q: usize,
    w: *const f64,
    x: Src,
    y: Dst,
    g: usize,
) {
    // SAFETY: as required of the caller.
    unsafe {
        let t = [
            twiddle3(butterfly4(load4(x, g, 4 * q)), lanes3(w, 0)),
            twiddle3(butterfly4(load4(x, g + q, 4 * q)), lanes3(w, 3)),
            twiddle3(butterfly4(load4(x, g + 2 * q, 4 * q)), lanes3(w, 6)),
            twiddle3(butterfly4(load4(x, g + 3 * q, 4 * q)), lanes3(w, 9)),
        ];
        let wb = lanes3(w, 12);
        let second = |b: [Cx<V>; 4]| {
            if ZERO {
                twiddle3_but_lane0(b, wb)
            } else {
                twiddle3(b, wb)
            }
        };
        let [t0, t1, t2, t3] = t;
        let z0 = second(butterfly4([t0[0], t1[0], t2[0], t3[0]]));
        let z1 = second(butterfly4([t0[1], t1[1], t2[1], t3[1]]));
        let z2 = second(butterfly4([t0[2], t1[2], t2[2], t3[2]]));
        let z3 = second(butterfly4([t0[3], t1[3], t2[3], t3[3]]));
        let at = 16 * g;
        store_columns16(z0[0], z1[0], z2[0], z3[0], y, at);
        store_columns16(z0[1], z1[1], z2[1], z3[1], y, at + 4);
        store_columns16(z0[2], z1[2], z2[2], z3[2], y, at + 8);
        store_columns16(z0[3], z1[3], z2[3], z3[3], y, at + 12);
    }
}

/// Two radix-4 passes of strides s ≥ 16 and 4s over first length n, `V::W` consecutive j < s
/// per step. With q = n/16 and p = p' + r'·q: pass 1 reads `x[s·(p' + (r' + 4r)·q) + j]` and
/// multiplies output m by `W_n^(mp)` except at p = 0; pass 2 combines the four r' for each m,
/// multiplies output m' by `W_(n/4)^(m'p')` except at p' = 0, and writes
/// `y[4s·(4p' + m') + s·m + j]`.
///
/// # Safety
/// As [`Stage::apply`]; s a multiple of `V::W`, `tw` from [`pair_twiddles`] with width 1.
/// Indices: read below s·q + 15·q·s = N, written below 16·s·q = N.
#[inline(always)]
unsafe fn pair<V: Lanes>(n: usize, s: usize, tw: &[f64], x: Src, y: Dst) {
    let q = n / 16;
    debug_assert!(s % V::W == 0 && tw.len() == 30 * q);
    for p in 0..q {
        let w = tw[30 * p..30 * p + 30].as_ptr();
        // SAFETY: the bounds above.
        unsafe {
            if p == 0 {
                pair_row::<V, true>(s, q * s, w, x, y, 0);
            } else {
                pair_row::<V, false>(s, q * s, w, x, y, p);
            }
        }
    }
}

/// One p' of [`pair`]; `ZERO` when p' = 0.
///
/// # Safety
/// As [`pair`]; `u` = q·s, `w` the row's 30 twiddles.
#[inline(always)]
unsafe fn pair_row<V: Lanes, const ZERO: bool>(
    s: usize,
    u: usize,
    w: *const f64,
    x: Src,
    y: Dst,
    p: usize,
) {
    // SAFETY: as required of the caller.
    unsafe {
        let wa: [[Cx<V>; 3]; 4] = [splat3(w, 0), splat3(w, 3), splat3(w, 6), splat3(w, 9)];
        let wb = splat3(w, 12);
        let (xo, yo) = (s * p, 16 * s * p);
        let mut j = 0;
        while j < s {
            let k = xo + j;
            let b0 = butterfly4(load4(x, k, 4 * u));
            let t0 = if ZERO { b0 } else { twiddle3(b0, wa[0]) };
            let t1 = twiddle3(butterfly4(load4(x, k + u, 4 * u)), wa[1]);
            let t2 = twiddle3(butterfly4(load4(x, k + 2 * u, 4 * u)), wa[2]);
            let t3 = twiddle3(butterfly4(load4(x, k + 3 * u, 4 * u)), wa[3]);
            let second = |b: [Cx<V>; 4]| if ZERO { b } else { twiddle3(b, wb) };
            let k = yo + j;
            store4(
                second(butterfly4([t0[0], t1[0], t2[0], t3[0]])),
                y,
                k,
                4 * s,
            );
            store4(
                second(butterfly4([t0[1], t1[1], t2[1], t3[1]])),
                y,
                k + s,
                4 * s,
            );
            store4(
                second(butterfly4([t0[2], t1[2], t2[2], t3[2]])),
                y,
                k + 2 * s,
                4 * s,
            );
            store4(
                second(butterfly4([t0[3], t1[3], t2[3], t3[3]])),
                y,
                k + 3 * s,
                4 * s,
            );
            j += V::W;
        }
    }
}

/// The radix-4 pass of length 4 (stride s = N/4), the last: `y[s·m + j] = B_m(x[s·r + j])`,
/// multiplied by `W^0` when it is also the first pass (N = 4, as every first pass does).
///
/// # Safety
/// As [`Stage::apply`]; s a multiple of `V::W`, `tw` of 6 entries.
#[inline(always)]
unsafe fn four<V: Lanes>(s: usize, tw: &[f64], x: Src, y: Dst) {
    assert!(tw.len() == 6);
    let mut j = 0;
    while j < s {
        // SAFETY: indices below 4s = N; `tw` has 6 entries.
        unsafe {
            let mut b = butterfly4(load4::<V>(x, j, s));
            if s == 1 {
                b = twiddle3(b, splat3(tw.as_ptr(), 0));
            }
            store4(b, y, j, s);
        }
        j += V::W;
    }
}

/// The radix-4 pass of length 8 (stride s = N/8, p = 0, 1) and the radix-2 pass after it:
/// `t_p[m] = W_8^(mp)·B_m(x[s·(p + 2r) + j])` (at p = 0 only on the first pass, N = 8), then
/// `y[s·m + j] = t_0[m] + t_1[m]`, `y[4s + s·m + j] = t_0[m] − t_1[m]`.
///
/// # Safety
/// As [`Stage::apply`]; s a multiple of `V::W`, `tw` of 12 entries. Indices below 8s = N.
#[inline(always)]
unsafe fn eight<V: Lanes>(s: usize, tw: &[f64], x: Src, y: Dst) {
    assert!(tw.len() == 12);
    // SAFETY: `tw` has 12 entries.
    let (w0, w1) = unsafe { (splat3::<V>(tw.as_ptr(), 0), splat3::<V>(tw.as_ptr(), 3)) };
    let mut j = 0;
    while j < s {
        // SAFETY: the bounds above.
        unsafe {
            let b0 = butterfly4(load4::<V>(x, j, 2 * s));
            let t0 = if s == 1 { twiddle3(b0, w0) } else { b0 };
            let t1 = twiddle3(butterfly4(load4::<V>(x, j + s, 2 * s)), w1);
            let sum = [
                t0[0].add(t1[0]),
                t0[1].add(t1[1]),
                t0[2].add(t1[2]),
                t0[3].add(t1[3]),
            ];
            let dif = [
                t0[0].sub(t1[0]),
                t0[1].sub(t1[1]),
                t0[2].sub(t1[2]),
                t0[3].sub(t1[3]),
            ];
            store4(sum, y, j, s);
            store4(dif, y, j + 4 * s, s);
        }
        j += V::W;
    }
}

/// The radix-2 pass alone (stride s = N/2), the last: output `j` is `x[j] + x[j + s]`,
/// output `j + s` is `x[j] − x[j + s]`; only outputs `skip..N` are stored, output k at
/// `y[k − skip]`.
///
/// # Safety
/// As [`Stage::apply`]; s and `skip` ≤ s multiples of `V::W`. Reads below 2s = N, writes below
/// N − `skip`.
#[inline(always)]
unsafe fn two<V: Lanes>(s: usize, skip: usize, x: Src, y: Dst) {
    let mut j = 0;
    while j < s {
        // SAFETY: the bounds above (j ≥ skip before the first store, j + s ≥ skip always).
        unsafe {
            let (a, b) = (Cx::<V>::load(x, j), Cx::<V>::load(x, j + s));
            if j >= skip {
                a.add(b).store(y, j - skip);
            }
            a.sub(b).store(y, j + s - skip);
        }
        j += V::W;
    }
}

/// `cos(2πk/N)` and `sin(2πk/N)` for k in 0..N (N a power of two), from IEEE basic
/// operations only: the Taylor series up to π/4, exact symmetries beyond.
fn unit_circle(len: usize) -> (Vec<f64>, Vec<f64>) {
    let mut cos = vec![0.0; len];
    let mut sin = vec![0.0; len];
    // First quadrant, 0 ≤ k ≤ N/4 (all of it for N ≥ 4; N = 1, 2 need only k = 0 and N/2).
    let quarter = len / 4;
    for k in 0..=quarter.min(len - 1) {
        let (c, s) = if 8 * k == len {
            // π/4: both are 1/√2 (the correctly rounded constant).
            (
                std::f64::consts::FRAC_1_SQRT_2,
                std::f64::consts::FRAC_1_SQRT_2,
            )
        } else if 8 * k < len {
            sin_cos_octant(k as f64 * (std::f64::consts::TAU / len as f64))
        } else {
            // cos(π/2 − φ) = sin φ, sin(π/2 − φ) = cos φ, with φ = 2π(N/4 − k)/N ≤ π/4.
            let (c, s) =
                sin_cos_octant((quarter - k) as f64 * (std::f64::consts::TAU / len as f64));
            (s, c)
        };
        cos[k] = c;
        sin[k] = s;
    }
    if len >= 4 {
        // Second quadrant: θ = π/2 + φ → cos θ = −sin φ, sin θ = cos φ.
        for k in quarter + 1..len / 2 {
            cos[k] = -sin[k - quarter];
            sin[k] = cos[k - quarter];
        }
    }
    if len >= 2 {
        // Second half: θ = π + φ → both negated.
        for k in len / 2..len {
            cos[k] = -cos[k - len / 2];
            sin[k] = -sin[k - len / 2];
        }
    }
    (cos, sin)
}

/// `(cos x, sin x)` for `0 ≤ x ≤ π/4` from the Taylor series (terms to x^22 / x^23, whose
/// truncation error is below 1e-24), in Horner form. Coefficients are built by IEEE division,
/// so every machine gets the same bits.
fn sin_cos_octant(x: f64) -> (f64, f64) {
    const TERMS: usize = 11;
    let x2 = x * x;
    // cos: Σ (−1)^m x^(2m)/(2m)!, sin: x·Σ (−1)^m x^(2m)/(2m+1)!.
    let mut cc = [0.0; TERMS + 1];
    let mut sc = [0.0; TERMS + 1];
    cc[0] = 1.0;
    sc[0] = 1.0;
    for m in 1..=TERMS {
        let a = (2 * m - 1) as f64;
        let b = (2 * m) as f64;
        cc[m] = -cc[m - 1] / (a * b);
        sc[m] = -sc[m - 1] / (b * (b + 1.0));
    }
    let mut c = cc[TERMS];
    let mut s = sc[TERMS];
    for m in (0..TERMS).rev() {
        c = c * x2 + cc[m];
        s = s * x2 + sc[m];
    }
    (c, s * x)
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{RngExt, SeedableRng};
    use rand_chacha::ChaCha8Rng;
    use rand_distr::StandardNormal;

    const SEED: u64 = 0x5eed_f0f7;
    /// Unit roundoff of f64 (2⁻⁵³).
    const U: f64 = f64::EPSILON / 2.0;
    /// Twiddle error bound μ (see `twiddles_match_sin_cos_within_mu`).
    const MU: f64 = 2.0 * f64::EPSILON;

    fn random(len: usize, seed: u64) -> (Vec<f64>, Vec<f64>) {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let re = (0..len).map(|_| rng.sample(StandardNormal)).collect();
        let im = (0..len).map(|_| rng.sample(StandardNormal)).collect();
        (re, im)
    }

    fn forward(fft: &Fft, x: &(Vec<f64>, Vec<f64>)) -> (Vec<f64>, Vec<f64>) {
        let n = fft.len();
        let (mut yr, mut yi) = (vec![0.0; n], vec![0.0; n]);
        let (mut tr, mut ti) = (vec![0.0; n], vec![0.0; n]);
        fft.forward_into((&x.0, &x.1), (&mut yr, &mut yi), (&mut tr, &mut ti));
        (yr, yi)
    }

    /// Higham, Accuracy and Stability of Numerical Algorithms (2nd ed.), Theorem 24.2: relative
    /// 2-norm error of a radix-2 FFT of length 2^t is at most tη/(1 − tη). A radix-4 pass does
    /// two radix-2 levels' additions and at most one twiddle product per output, fewer
    /// operations than the two levels, so the bound carries over.
    fn higham_bound(len: usize) -> f64 {
        let t = len.trailing_zeros() as f64;
        let gamma4 = 4.0 * U / (1.0 - 4.0 * U);
        let eta = MU + gamma4 * (2f64.sqrt() + MU);
        t * eta / (1.0 - t * eta)
    }

    fn rel_err(a: &(Vec<f64>, Vec<f64>), b: &(Vec<f64>, Vec<f64>)) -> f64 {
        let mut num = 0.0;
        let mut den = 0.0;
        for k in 0..a.0.len() {
            num += (a.0[k] - b.0[k]).powi(2) + (a.1[k] - b.1[k]).powi(2);
            den += b.0[k].powi(2) + b.1[k].powi(2);
        }
        (num / den).sqrt()
    }

    /// O(N²) DFT with libm twiddles of the exact index n·k mod N and compensated (Neumaier)
    /// sums, so its own error is a random sum of the products' roundings, of order u·‖y‖.
    fn naive_dft(x: &(Vec<f64>, Vec<f64>)) -> (Vec<f64>, Vec<f64>) {
        let n = x.0.len();
        let w: Vec<(f64, f64)> = (0..n)
            .map(|k| {
                let (s, c) = (std::f64::consts::TAU * k as f64 / n as f64).sin_cos();
                (c, -s)
            })
            .collect();
        let mut yr = vec![0.0; n];
        let mut yi = vec![0.0; n];
        for k in 0..n {
            let (mut sr, mut cr, mut si, mut ci) = (0.0f64, 0.0f64, 0.0f64, 0.0f64);
            let add = |s: &mut f64, c: &mut f64, v: f64| {
                let t = *s + v;
                *c += if s.abs() >= v.abs() {
                    (*s - t) + v
                } else {
                    (v - t) + *s
                };
                *s = t;
            };
            for j in 0..n {
                let (wr, wi) = w[(j * k) % n];
                add(&mut sr, &mut cr, x.0[j] * wr);
                add(&mut sr, &mut cr, -(x.1[j] * wi));
                add(&mut si, &mut ci, x.0[j] * wi);
                add(&mut si, &mut ci, x.1[j] * wr);
            }
            yr[k] = sr + cr;
            yi[k] = si + ci;
        }
        (yr, yi)
    }

    #[test]
    fn the_octant_series_matches_sin_cos_within_one_ulp() {
        // Same argument for both: only the evaluation differs (libm's is within one ulp).
        let m = 100_000;
        let mut worst = 0.0f64;
        for j in 0..=m {
            let x = std::f64::consts::FRAC_PI_4 * j as f64 / m as f64;
            let (c, s) = sin_cos_octant(x);
            let (s0, c0) = x.sin_cos();
            worst = worst.max((c - c0).abs()).max((s - s0).abs());
        }
        assert!(worst <= f64::EPSILON, "worst error {worst:e} on [0, π/4]");
    }

    /// The table's error against the exact unit circle is the octant series' (≤ one ulp, test
    /// above) plus that of its argument k·(2π/N) ≤ π/4 (≤ (u + 4e-17)·π/4 for the rounding and
    /// the constant TAU), carried exactly by the symmetries: below MU = 2ε. The reference here,
    /// libm at fl(TAU·k)/N, has its own argument error of up to ε·θ, so that is allowed for.
    #[test]
    fn twiddles_match_sin_cos_within_mu() {
        for log2 in 0..=16 {
            let n = 1usize << log2;
            let (cos, sin) = unit_circle(n);
            for k in 0..n {
                let theta = std::f64::consts::TAU * k as f64 / n as f64;
                let (s, c) = theta.sin_cos();
                let tol = MU + f64::EPSILON * theta;
                assert!(
                    (cos[k] - c).abs() <= tol && (sin[k] - s).abs() <= tol,
                    "N = {n}, k = {k}: ({}, {}) against ({c}, {s})",
                    cos[k],
                    sin[k]
                );
            }
        }
        // Exact values at multiples of π/4.
        let (cos, sin) = unit_circle(8);
        assert_eq!((cos[0], sin[0]), (1.0, 0.0));
        assert_eq!((cos[2], sin[2]), (0.0, 1.0));
        assert_eq!((cos[4], sin[4]), (-1.0, -0.0));
        assert_eq!((cos[6], sin[6]), (-0.0, -1.0));
        assert_eq!(cos[1], sin[1]);
    }

    #[test]
    fn forward_matches_a_naive_dft_within_the_round_off_bound() {
        for log2 in 0..=13 {
            let n = 1usize << log2;
            let x = random(n, SEED + log2 as u64);
            let y = forward(&Fft::new(n), &x);
            let reference = naive_dft(&x);
            // Allowance of 8u for the reference's own rounding.
            let bound = higham_bound(n) + 8.0 * U;
            let err = rel_err(&y, &reference);
            assert!(
                err <= bound,
                "seed {}, N = {n}: relative error {err:e} > {bound:e}",
                SEED + log2 as u64
            );
        }
    }

    #[test]
    fn forward_matches_rustfft_within_twice_the_bound_at_larger_lengths() {
        use rustfft::num_complex::Complex;
        for log2 in [14, 15, 16] {
            let n = 1usize << log2;
            let x = random(n, SEED + log2 as u64);
            let y = forward(&Fft::new(n), &x);
            let mut buf: Vec<Complex<f64>> = (0..n).map(|k| Complex::new(x.0[k], x.1[k])).collect();
            rustfft::FftPlannerScalar::new()
                .plan_fft_forward(n)
                .process(&mut buf);
            let reference = (
                buf.iter().map(|c| c.re).collect::<Vec<_>>(),
                buf.iter().map(|c| c.im).collect::<Vec<_>>(),
            );
            // Both are FFTs under the same theorem: their difference is at most twice the bound.
            let bound = 2.0 * higham_bound(n);
            let err = rel_err(&y, &reference);
            assert!(
                err <= bound,
                "seed {}, N = {n}: {err:e} > {bound:e}",
                SEED + log2 as u64
            );
        }
    }

    #[test]
    fn inverse_after_forward_returns_the_input_within_the_bound() {
        for log2 in 0..=15 {
            let n = 1usize << log2;
            let fft = Fft::new(n);
            let x = random(n, SEED ^ log2 as u64);
            let (mut re, mut im) = x.clone();
            let (mut tr, mut ti) = (vec![0.0; n], vec![0.0; n]);
            fft.forward((&mut re, &mut im), (&mut tr, &mut ti));
            fft.inverse((&mut re, &mut im), (&mut tr, &mut ti));
            let back = (
                re.iter().map(|v| v / n as f64).collect::<Vec<_>>(),
                im.iter().map(|v| v / n as f64).collect::<Vec<_>>(),
            );
            // Two transforms and one exact scaling by a power of two.
            let bound = 2.0 * higham_bound(n) + U;
            let err = rel_err(&back, &x);
            assert!(
                err <= bound,
                "seed {}, N = {n}: {err:e} > {bound:e}",
                SEED ^ log2 as u64
            );
        }
    }

    #[test]
    fn inverse_is_the_conjugate_transform() {
        // F⁻¹(x) = conj(F(conj x)), checked bit for bit.
        for log2 in [0, 1, 2, 3, 6, 11, 13] {
            let n = 1usize << log2;
            let fft = Fft::new(n);
            let x = random(n, SEED + 100 + log2 as u64);
            let (mut yr, mut yi) = (vec![0.0; n], vec![0.0; n]);
            let (mut tr, mut ti) = (vec![0.0; n], vec![0.0; n]);
            fft.inverse_into((&x.0, &x.1), (&mut yr, &mut yi), (&mut tr, &mut ti));
            let conj = (x.0.clone(), x.1.iter().map(|v| -v).collect::<Vec<_>>());
            let f = forward(&fft, &conj);
            let expected: Vec<f64> = f.1.iter().map(|v| -v).collect();
            // Exchanging re and im equals i·conj(·): the bits agree up to the sign of zeros.
            assert!(yr == f.0 && yi == expected, "N = {n}");
        }
    }

    #[test]
    fn the_inverse_tail_is_the_tail_of_the_inverse_bit_for_bit() {
        let mut direct = 0;
        for log2 in 0..=14 {
            let n = 1usize << log2;
            for fft in [Fft::new(n), Fft::baseline(n)] {
                // Skips the last stage can store itself and ones that need the copy.
                for skip in [0, 1, L, n / 4, n / 2, n / 2 + L, n - 1, n] {
                    if skip > n {
                        continue;
                    }
                    direct += usize::from(fft.tail_fits(skip));
                    let x = random(n, SEED + 400 + log2 as u64);
                    let (mut re, mut im) = x.clone();
                    let (mut tr, mut ti) = (vec![0.0; n], vec![0.0; n]);
                    fft.inverse((&mut re, &mut im), (&mut tr, &mut ti));
                    let (mut dr, mut di) = x.clone();
                    let (mut ar, mut ai) = (vec![0.0; n - skip], vec![0.0; n - skip]);
                    fft.inverse_tail(
                        (&mut dr, &mut di),
                        (&mut tr, &mut ti),
                        skip,
                        (&mut ar, &mut ai),
                    );
                    assert!(
                        bits(&ar) == bits(&re[skip..]) && bits(&ai) == bits(&im[skip..]),
                        "N = {n}, skip {skip}, {:?}",
                        fft.isa
                    );
                }
            }
        }
        // N = 2, 32, 512 and 8192 end in the radix-2 stage, so the direct path ran.
        assert!(direct >= 4 * 2 * 3, "direct tails: {direct}");
    }

    #[test]
    fn in_place_and_out_of_place_give_the_same_bits() {
        for log2 in 0..=13 {
            let n = 1usize << log2;
            let fft = Fft::new(n);
            let x = random(n, SEED + 200 + log2 as u64);
            let y = forward(&fft, &x);
            let (mut re, mut im) = x.clone();
            let (mut tr, mut ti) = (vec![0.0; n], vec![0.0; n]);
            fft.forward((&mut re, &mut im), (&mut tr, &mut ti));
            assert!(
                bits(&re) == bits(&y.0) && bits(&im) == bits(&y.1),
                "N = {n}"
            );
        }
    }

    fn bits(x: &[f64]) -> Vec<u64> {
        x.iter().map(|v| v.to_bits()).collect()
    }

    /// The defining sequence of operations, one scalar at a time: for every pass (length n,
    /// stride s, q = n/4), every p < q and j < s, the butterfly of
    /// `x[s·(p + r·q) + j]` (r = 0..3), outputs m = 1..3 multiplied by `W_n^(mp)` (always on
    /// the first pass, only for p > 0 on the others), stored at `y[s·(4p + m) + j]`; then the
    /// radix-2 pass of an odd log2 N. Every optimised path must give exactly these bits.
    fn oracle_forward(x: &(Vec<f64>, Vec<f64>)) -> (Vec<f64>, Vec<f64>) {
        let len = x.0.len();
        let (cos, sin) = unit_circle(len);
        let (mut xr, mut xi) = x.clone();
        let (mut yr, mut yi) = (vec![0.0; len], vec![0.0; len]);
        let mut n = len;
        while n >= 4 {
            let (s, q) = (len / n, n / 4);
            for p in 0..q {
                for j in 0..s {
                    let at = |r: usize| s * (p + r * q) + j;
                    let (ar, ai, br, bi) = (xr[at(0)], xi[at(0)], xr[at(1)], xi[at(1)]);
                    let (cr, ci, dr, di) = (xr[at(2)], xi[at(2)], xr[at(3)], xi[at(3)]);
                    let (apc_r, apc_i, amc_r, amc_i) = (ar + cr, ai + ci, ar - cr, ai - ci);
                    let (bpd_r, bpd_i, bmd_r, bmd_i) = (br + dr, bi + di, br - dr, bi - di);
                    let y = [
                        (apc_r + bpd_r, apc_i + bpd_i),
                        (amc_r + bmd_i, amc_i - bmd_r),
                        (apc_r - bpd_r, apc_i - bpd_i),
                        (amc_r - bmd_i, amc_i + bmd_r),
                    ];
                    for (m, (zr, zi)) in y.into_iter().enumerate() {
                        let (zr, zi) = if m > 0 && (s == 1 || p > 0) {
                            let (wr, wi) = (cos[m * p * s], -sin[m * p * s]);
                            (wr * zr - wi * zi, wr * zi + wi * zr)
                        } else {
                            (zr, zi)
                        };
                        yr[s * (4 * p + m) + j] = zr;
                        yi[s * (4 * p + m) + j] = zi;
                    }
                }
            }
            std::mem::swap(&mut xr, &mut yr);
            std::mem::swap(&mut xi, &mut yi);
            n /= 4;
        }
        if n == 2 {
            let h = len / 2;
            for j in 0..h {
                let (ar, ai, br, bi) = (xr[j], xi[j], xr[j + h], xi[j + h]);
                (xr[j], xi[j], xr[j + h], xi[j + h]) = (ar + br, ai + bi, ar - br, ai - bi);
            }
        }
        (xr, xi)
    }

    /// Inputs for the bit tests: Gaussian, and a sparse one of signed zeros and a few values
    /// (so that the signs of zero results are checked too).
    fn bit_test_inputs(n: usize, seed: u64) -> Vec<(Vec<f64>, Vec<f64>)> {
        let gauss = random(n, seed);
        let mut sparse = (vec![0.0; n], vec![-0.0; n]);
        for k in (0..n).step_by(7) {
            sparse.0[k] = if k % 2 == 0 { -0.0 } else { 1.5 };
            sparse.1[k] = gauss.0[k];
        }
        let real = (gauss.0.clone(), vec![0.0; n]);
        vec![gauss, sparse, real]
    }

    #[test]
    fn every_path_gives_the_bits_of_the_defining_scalar_sequence() {
        for log2 in 0..=16 {
            let n = 1usize << log2;
            let plans = [Fft::new(n), Fft::baseline(n)];
            for (t, x) in bit_test_inputs(n, SEED + 300 + log2 as u64)
                .iter()
                .enumerate()
            {
                let want = oracle_forward(x);
                // The inverse is the forward transform of the exchanged parts, exchanged back.
                let swapped = (x.1.clone(), x.0.clone());
                let want_inv = oracle_forward(&swapped);
                for fft in &plans {
                    let what = format!("N = {n}, input {t}, {:?}", fft.isa);
                    let y = forward(fft, x);
                    assert!(
                        bits(&y.0) == bits(&want.0) && bits(&y.1) == bits(&want.1),
                        "{what}"
                    );
                    let (mut re, mut im) = x.clone();
                    let (mut tr, mut ti) = (vec![0.0; n], vec![0.0; n]);
                    fft.forward((&mut re, &mut im), (&mut tr, &mut ti));
                    assert!(
                        bits(&re) == bits(&want.0) && bits(&im) == bits(&want.1),
                        "{what}"
                    );
                    let (mut re, mut im) = x.clone();
                    fft.inverse((&mut re, &mut im), (&mut tr, &mut ti));
                    let ok = bits(&re) == bits(&want_inv.1) && bits(&im) == bits(&want_inv.0);
                    assert!(ok, "{what}, inverse");
                    let (mut yr, mut yi) = (vec![0.0; n], vec![0.0; n]);
                    fft.inverse_into((&x.0, &x.1), (&mut yr, &mut yi), (&mut tr, &mut ti));
                    let ok = bits(&yr) == bits(&want_inv.1) && bits(&yi) == bits(&want_inv.0);
                    assert!(ok, "{what}, inverse_into");
                }
            }
        }
    }

    #[test]
    fn the_avx2_path_gives_the_same_bits_as_the_baseline() {
        let fast = |n| Fft::new(n);
        if Fft::new(4).isa == Isa::Baseline {
            eprintln!("no AVX2 on this CPU: only the baseline path is tested here");
        }
        for log2 in 0..=15 {
            let n = 1usize << log2;
            for trial in 0..3u64 {
                let seed = SEED + 1000 * trial + log2 as u64;
                let x = random(n, seed);
                let a = forward(&fast(n), &x);
                let b = forward(&Fft::baseline(n), &x);
                assert!(
                    bits(&a.0) == bits(&b.0) && bits(&a.1) == bits(&b.1),
                    "seed {seed}, N = {n}"
                );
            }
        }
    }
}
