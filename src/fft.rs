//! A complex f64 FFT for power-of-two lengths whose results are the same, bit for bit, on
//! every machine.
//!
//! [`Fft::new`] plans a length once (twiddles and the sequence of passes); the transforms then
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
//!   one radix-2 pass when log2 N is odd. Every pass is a loop over contiguous runs of samples
//!   whose body uses only IEEE `+`, `−` and `×` on f64. Vector code (SSE2, or AVX2 chosen at
//!   run time) applies that same body to 2 or 4 lanes at once, so each lane performs exactly
//!   the scalar operations, in the same order. Rust never contracts `a·b + c` into a fused
//!   multiply-add and has no fast-math mode, and `mul_add` is not used, so a wider vector or an
//!   FMA-capable CPU cannot change a result. Which code runs for a pass depends only on N, never
//!   on the CPU, and the test `the_avx2_path_gives_the_same_bits_as_the_baseline` checks it.
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

/// Samples per lane group: the width of the explicit lane arrays (four f64 fill one AVX2
/// register; SSE2 uses two registers).
const L: usize = 4;

/// A planned FFT of one power-of-two length.
#[derive(Debug, Clone)]
pub struct Fft {
    len: usize,
    passes: Vec<Pass>,
    isa: Isa,
}

/// Which compiled copy of the (identical) pass code runs.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Isa {
    Baseline,
    #[cfg(target_arch = "x86_64")]
    Avx2,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    /// Radix 4 with stride 1 (the first pass): lanes run over butterflies.
    First4,
    /// Radix 4 with stride ≥ 4: lanes run over the stride.
    Radix4,
    /// The radix-2 pass of an odd log2 N, last, with no twiddles.
    Last2,
}

#[derive(Debug, Clone)]
struct Pass {
    kind: Kind,
    /// Length of the sub-transforms this pass splits.
    n: usize,
    /// Stride: N / n.
    s: usize,
    /// Twiddles `W^p, W^2p, W^3p` (`W = e^(−2πi/n)`, p < n/4) as six runs of n/4:
    /// re and im of `W^p`, then of `W^2p`, then of `W^3p`.
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
        let mut passes = Vec::new();
        let mut n = len;
        while n >= 4 {
            let s = len / n;
            let quarter = n / 4;
            let mut tw = vec![0.0; 6 * quarter];
            for m in 1..=3 {
                for p in 0..quarter {
                    // W_n^(m·p) = W_len^(m·p·s); m·p·s < 3·len/4.
                    let k = m * p * s;
                    tw[(2 * m - 2) * quarter + p] = cos[k];
                    tw[(2 * m - 1) * quarter + p] = -sin[k];
                }
            }
            let kind = if s == 1 { Kind::First4 } else { Kind::Radix4 };
            passes.push(Pass { kind, n, s, tw });
            n /= 4;
        }
        if n == 2 {
            passes.push(Pass {
                kind: Kind::Last2,
                n: 2,
                s: len / 2,
                tw: Vec::new(),
            });
        }
        Fft {
            len,
            passes,
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

    /// Run the passes. The radix-4 passes alternate between `out` and `tmp`, pass k writing to
    /// `out` when an even number of radix-4 passes follow it (out of place) or when k is odd
    /// (in place, the data starting in `out`); the radix-2 pass then works in place in `out`,
    /// or moves the data there from `tmp`. A copy is needed only in place, for an odd number
    /// of radix-4 passes and no radix-2 pass.
    fn run(
        &self,
        input: Option<(&[f64], &[f64])>,
        out: (&mut [f64], &mut [f64]),
        tmp: (&mut [f64], &mut [f64]),
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
        #[derive(Clone, Copy, PartialEq)]
        enum Loc {
            In,
            Out,
            Tmp,
        }
        let moves = self.passes.iter().filter(|p| p.kind != Kind::Last2).count();
        let mut at = if input.is_some() { Loc::In } else { Loc::Out };
        for (k, pass) in self.passes.iter().enumerate() {
            let isa = self.isa;
            if pass.kind == Kind::Last2 {
                match at {
                    Loc::In => {
                        let (r, i) = input.unwrap();
                        pass.apply(isa, r, i, out_re, out_im);
                    }
                    Loc::Tmp => pass.apply(isa, tmp_re, tmp_im, out_re, out_im),
                    Loc::Out => pass.apply_in_place(isa, out_re, out_im),
                }
                at = Loc::Out;
                continue;
            }
            let to_out = if input.is_some() {
                (moves - 1 - k) % 2 == 0
            } else {
                k % 2 == 1
            };
            match (at, to_out) {
                (Loc::In, true) => {
                    let (r, i) = input.unwrap();
                    pass.apply(isa, r, i, out_re, out_im);
                }
                (Loc::In, false) => {
                    let (r, i) = input.unwrap();
                    pass.apply(isa, r, i, tmp_re, tmp_im);
                }
                (Loc::Out, false) => pass.apply(isa, out_re, out_im, tmp_re, tmp_im),
                (Loc::Tmp, true) => pass.apply(isa, tmp_re, tmp_im, out_re, out_im),
                _ => unreachable!("FFT passes alternate between two buffers"),
            }
            at = if to_out { Loc::Out } else { Loc::Tmp };
        }
        match at {
            Loc::In => {
                let (r, i) = input.unwrap();
                out_re.copy_from_slice(r);
                out_im.copy_from_slice(i);
            }
            Loc::Tmp => {
                out_re.copy_from_slice(tmp_re);
                out_im.copy_from_slice(tmp_im);
            }
            Loc::Out => {}
        }
    }
}

impl Pass {
    fn apply(&self, isa: Isa, xr: &[f64], xi: &[f64], yr: &mut [f64], yi: &mut [f64]) {
        match isa {
            Isa::Baseline => self.apply_any(xr, xi, yr, yi),
            // SAFETY: `Isa::Avx2` is only chosen after `is_x86_feature_detected!("avx2")`.
            #[cfg(target_arch = "x86_64")]
            Isa::Avx2 => unsafe { self.apply_avx2(xr, xi, yr, yi) },
        }
    }

    fn apply_in_place(&self, isa: Isa, re: &mut [f64], im: &mut [f64]) {
        match isa {
            Isa::Baseline => self.apply_in_place_any(re, im),
            // SAFETY: `Isa::Avx2` is only chosen after `is_x86_feature_detected!("avx2")`.
            #[cfg(target_arch = "x86_64")]
            Isa::Avx2 => unsafe { self.apply_in_place_avx2(re, im) },
        }
    }

    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn apply_in_place_avx2(&self, re: &mut [f64], im: &mut [f64]) {
        self.apply_in_place_any(re, im)
    }

    /// Only the radix-2 pass runs in place.
    #[inline(always)]
    fn apply_in_place_any(&self, re: &mut [f64], im: &mut [f64]) {
        debug_assert_eq!(self.kind, Kind::Last2);
        if self.s % L == 0 {
            last2_in_place::<L>(self.s, re, im)
        } else {
            last2_in_place::<1>(self.s, re, im)
        }
    }

    /// The same code as [`Pass::apply_any`], compiled for AVX2 (not FMA: no contraction
    /// happens either way, see the module docs).
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn apply_avx2(&self, xr: &[f64], xi: &[f64], yr: &mut [f64], yi: &mut [f64]) {
        self.apply_any(xr, xi, yr, yi)
    }

    #[inline(always)]
    fn apply_any(&self, xr: &[f64], xi: &[f64], yr: &mut [f64], yi: &mut [f64]) {
        match self.kind {
            Kind::First4 if self.n / 4 % L == 0 => first4::<L>(self.n, &self.tw, xr, xi, yr, yi),
            Kind::First4 => first4::<1>(self.n, &self.tw, xr, xi, yr, yi),
            Kind::Radix4 => radix4(self.n, self.s, &self.tw, xr, xi, yr, yi),
            Kind::Last2 if self.s % L == 0 => last2::<L>(self.s, xr, xi, yr, yi),
            Kind::Last2 => last2::<1>(self.s, xr, xi, yr, yi),
        }
    }
}

/// `K` f64 lanes, each computed with the scalar expression.
type V<const K: usize> = [f64; K];

#[inline(always)]
fn add<const K: usize>(a: V<K>, b: V<K>) -> V<K> {
    let mut r = [0.0; K];
    for k in 0..K {
        r[k] = a[k] + b[k];
    }
    r
}

#[inline(always)]
fn sub<const K: usize>(a: V<K>, b: V<K>) -> V<K> {
    let mut r = [0.0; K];
    for k in 0..K {
        r[k] = a[k] - b[k];
    }
    r
}

#[inline(always)]
fn mul<const K: usize>(a: V<K>, b: V<K>) -> V<K> {
    let mut r = [0.0; K];
    for k in 0..K {
        r[k] = a[k] * b[k];
    }
    r
}

/// Complex product `(wr + i·wi)(xr + i·xi)` lane by lane, in one fixed order.
#[inline(always)]
fn cmul<const K: usize>(wr: V<K>, wi: V<K>, xr: V<K>, xi: V<K>) -> (V<K>, V<K>) {
    (sub(mul(wr, xr), mul(wi, xi)), add(mul(wr, xi), mul(wi, xr)))
}

/// `x` as whole groups of `K` lanes.
#[inline(always)]
fn lanes<const K: usize>(x: &[f64]) -> &[[f64; K]] {
    assert!(x.len() % K == 0);
    // SAFETY: `[f64; K]` has the size of K f64 and the alignment of f64, and the length is a
    // whole number of groups, so the new slice covers exactly the same memory.
    unsafe { std::slice::from_raw_parts(x.as_ptr().cast(), x.len() / K) }
}

/// `x` as whole groups of `K` lanes, mutable.
#[inline(always)]
fn lanes_mut<const K: usize>(x: &mut [f64]) -> &mut [[f64; K]] {
    assert!(x.len() % K == 0);
    // SAFETY: as in `lanes`; the borrow of `x` is moved into the result.
    unsafe { std::slice::from_raw_parts_mut(x.as_mut_ptr().cast(), x.len() / K) }
}

/// The radix-4 butterfly of a forward DFT without twiddles: inputs a, b, c, d (re, im) give
/// the four outputs `a + b + c + d`, `a − ib − c + id`, `a − b + c − d`, `a + ib − c − id`.
#[inline(always)]
#[allow(clippy::type_complexity)]
fn butterfly4<const K: usize>(x: [(V<K>, V<K>); 4]) -> [(V<K>, V<K>); 4] {
    let [(ar, ai), (br, bi), (cr, ci), (dr, di)] = x;
    let (apc_r, apc_i) = (add(ar, cr), add(ai, ci));
    let (amc_r, amc_i) = (sub(ar, cr), sub(ai, ci));
    let (bpd_r, bpd_i) = (add(br, dr), add(bi, di));
    let (bmd_r, bmd_i) = (sub(br, dr), sub(bi, di));
    [
        (add(apc_r, bpd_r), add(apc_i, bpd_i)),
        (add(amc_r, bmd_i), sub(amc_i, bmd_r)),
        (sub(apc_r, bpd_r), sub(apc_i, bpd_i)),
        (sub(amc_r, bmd_i), add(amc_i, bmd_r)),
    ]
}

/// First radix-4 pass (stride 1) over length `n`: `y[4p + m] = W^(mp)·B_m(x[p + j·n/4])`,
/// K butterflies (consecutive p) at a time.
#[inline(always)]
fn first4<const K: usize>(
    n: usize,
    tw: &[f64],
    xr: &[f64],
    xi: &[f64],
    yr: &mut [f64],
    yi: &mut [f64],
) {
    let q = n / 4;
    let (xr0, xr1, xr2, xr3) = quarters(xr, q);
    let (xi0, xi1, xi2, xi3) = quarters(xi, q);
    let (w1r, w1i, w2r, w2i, w3r, w3i) = sixths(tw, q);
    let inputs = lanes::<K>(xr0)
        .iter()
        .zip(lanes::<K>(xi0).iter())
        .zip(lanes::<K>(xr1).iter())
        .zip(lanes::<K>(xi1).iter())
        .zip(lanes::<K>(xr2).iter())
        .zip(lanes::<K>(xi2).iter())
        .zip(lanes::<K>(xr3).iter())
        .zip(lanes::<K>(xi3).iter());
    let twiddles = lanes::<K>(w1r)
        .iter()
        .zip(lanes::<K>(w1i).iter())
        .zip(lanes::<K>(w2r).iter())
        .zip(lanes::<K>(w2i).iter())
        .zip(lanes::<K>(w3r).iter())
        .zip(lanes::<K>(w3i).iter());
    let outputs = lanes_mut::<4>(yr)
        .chunks_exact_mut(K)
        .zip(lanes_mut::<4>(yi).chunks_exact_mut(K));
    for ((x, tw), (or, oi)) in inputs.zip(twiddles).zip(outputs) {
        let (((((((ar, ai), br), bi), cr), ci), dr), di) = x;
        let (((((w1r, w1i), w2r), w2i), w3r), w3i) = tw;
        let [y0, y1, y2, y3] = butterfly4([(*ar, *ai), (*br, *bi), (*cr, *ci), (*dr, *di)]);
        let y1 = cmul(*w1r, *w1i, y1.0, y1.1);
        let y2 = cmul(*w2r, *w2i, y2.0, y2.1);
        let y3 = cmul(*w3r, *w3i, y3.0, y3.1);
        for l in 0..K {
            or[l] = [y0.0[l], y1.0[l], y2.0[l], y3.0[l]];
            oi[l] = [y0.1[l], y1.1[l], y2.1[l], y3.1[l]];
        }
    }
}

/// A radix-4 pass with stride `s ≥ L` over sub-transforms of length `n`:
/// `y[s·(4p + m) + j] = W^(mp)·B_m(x[s·(p + r·n/4) + j])`, L values of j at a time.
#[inline(always)]
fn radix4(n: usize, s: usize, tw: &[f64], xr: &[f64], xi: &[f64], yr: &mut [f64], yi: &mut [f64]) {
    let q = n / 4;
    let (xr0, xr1, xr2, xr3) = quarters(xr, q * s);
    let (xi0, xi1, xi2, xi3) = quarters(xi, q * s);
    let (w1r, w1i, w2r, w2i, w3r, w3i) = sixths(tw, q);
    let rows = yr
        .chunks_exact_mut(4 * s)
        .zip(yi.chunks_exact_mut(4 * s))
        .enumerate();
    for (p, (or, oi)) in rows {
        let at = s * p..s * p + s;
        let x = [
            (&xr0[at.clone()], &xi0[at.clone()]),
            (&xr1[at.clone()], &xi1[at.clone()]),
            (&xr2[at.clone()], &xi2[at.clone()]),
            (&xr3[at.clone()], &xi3[at]),
        ];
        let (or0, or1, or2, or3) = quarters_mut(or, s);
        let (oi0, oi1, oi2, oi3) = quarters_mut(oi, s);
        let y = [(or0, oi0), (or1, oi1), (or2, oi2), (or3, oi3)];
        if p == 0 {
            radix4_row(x, y, None);
        } else {
            let w = [
                ([w1r[p]; L], [w1i[p]; L]),
                ([w2r[p]; L], [w2i[p]; L]),
                ([w3r[p]; L], [w3i[p]; L]),
            ];
            radix4_row(x, y, Some(w));
        }
    }
}

#[inline(always)]
#[allow(clippy::type_complexity)]
fn radix4_row(
    x: [(&[f64], &[f64]); 4],
    y: [(&mut [f64], &mut [f64]); 4],
    w: Option<[(V<L>, V<L>); 3]>,
) {
    let [(ar, ai), (br, bi), (cr, ci), (dr, di)] = x;
    let [(y0r, y0i), (y1r, y1i), (y2r, y2i), (y3r, y3i)] = y;
    let inputs = lanes::<L>(ar)
        .iter()
        .zip(lanes::<L>(ai).iter())
        .zip(lanes::<L>(br).iter())
        .zip(lanes::<L>(bi).iter())
        .zip(lanes::<L>(cr).iter())
        .zip(lanes::<L>(ci).iter())
        .zip(lanes::<L>(dr).iter())
        .zip(lanes::<L>(di).iter());
    let outputs = lanes_mut::<L>(y0r)
        .iter_mut()
        .zip(lanes_mut::<L>(y0i).iter_mut())
        .zip(lanes_mut::<L>(y1r).iter_mut())
        .zip(lanes_mut::<L>(y1i).iter_mut())
        .zip(lanes_mut::<L>(y2r).iter_mut())
        .zip(lanes_mut::<L>(y2i).iter_mut())
        .zip(lanes_mut::<L>(y3r).iter_mut())
        .zip(lanes_mut::<L>(y3i).iter_mut());
    for ((((((((ar, ai), br), bi), cr), ci), dr), di), o) in inputs.zip(outputs) {
        let (((((((o0r, o0i), o1r), o1i), o2r), o2i), o3r), o3i) = o;
        let [z0, z1, z2, z3] = butterfly4([(*ar, *ai), (*br, *bi), (*cr, *ci), (*dr, *di)]);
        let (z1, z2, z3) = match w {
            None => (z1, z2, z3),
            Some([w1, w2, w3]) => (
                cmul(w1.0, w1.1, z1.0, z1.1),
                cmul(w2.0, w2.1, z2.0, z2.1),
                cmul(w3.0, w3.1, z3.0, z3.1),
            ),
        };
        *o0r = z0.0;
        *o0i = z0.1;
        *o1r = z1.0;
        *o1i = z1.1;
        *o2r = z2.0;
        *o2i = z2.1;
        *o3r = z3.0;
        *o3i = z3.1;
    }
}

/// The radix-2 last pass (sub-transforms of length 2, stride `s = N/2`, no twiddles):
/// `y[j] = x[j] + x[j + s]`, `y[j + s] = x[j] − x[j + s]`.
#[inline(always)]
fn last2<const K: usize>(s: usize, xr: &[f64], xi: &[f64], yr: &mut [f64], yi: &mut [f64]) {
    let (ar, br) = xr.split_at(s);
    let (ai, bi) = xi.split_at(s);
    let (y0r, y1r) = yr.split_at_mut(s);
    let (y0i, y1i) = yi.split_at_mut(s);
    let inputs = lanes::<K>(ar)
        .iter()
        .zip(lanes::<K>(ai).iter())
        .zip(lanes::<K>(br).iter())
        .zip(lanes::<K>(bi).iter());
    let outputs = lanes_mut::<K>(y0r)
        .iter_mut()
        .zip(lanes_mut::<K>(y0i).iter_mut())
        .zip(lanes_mut::<K>(y1r).iter_mut())
        .zip(lanes_mut::<K>(y1i).iter_mut());
    for ((((ar, ai), br), bi), (((o0r, o0i), o1r), o1i)) in inputs.zip(outputs) {
        let (ar, ai, br, bi) = (*ar, *ai, *br, *bi);
        *o0r = add(ar, br);
        *o0i = add(ai, bi);
        *o1r = sub(ar, br);
        *o1i = sub(ai, bi);
    }
}

/// [`last2`] in place: each output pair overwrites the input pair it comes from.
#[inline(always)]
fn last2_in_place<const K: usize>(s: usize, re: &mut [f64], im: &mut [f64]) {
    let (ar, br) = re.split_at_mut(s);
    let (ai, bi) = im.split_at_mut(s);
    let pairs = lanes_mut::<K>(ar)
        .iter_mut()
        .zip(lanes_mut::<K>(ai).iter_mut())
        .zip(lanes_mut::<K>(br).iter_mut())
        .zip(lanes_mut::<K>(bi).iter_mut());
    for (((ar, ai), br), bi) in pairs {
        let (a, b, c, d) = (*ar, *ai, *br, *bi);
        *ar = add(a, c);
        *ai = add(b, d);
        *br = sub(a, c);
        *bi = sub(b, d);
    }
}

fn quarters(x: &[f64], q: usize) -> (&[f64], &[f64], &[f64], &[f64]) {
    let (a, rest) = x.split_at(q);
    let (b, rest) = rest.split_at(q);
    let (c, d) = rest.split_at(q);
    (a, b, c, &d[..q])
}

#[allow(clippy::type_complexity)]
fn quarters_mut(x: &mut [f64], q: usize) -> (&mut [f64], &mut [f64], &mut [f64], &mut [f64]) {
    let (a, rest) = x.split_at_mut(q);
    let (b, rest) = rest.split_at_mut(q);
    let (c, d) = rest.split_at_mut(q);
    (a, b, c, &mut d[..q])
}

#[allow(clippy::type_complexity)]
fn sixths(x: &[f64], q: usize) -> (&[f64], &[f64], &[f64], &[f64], &[f64], &[f64]) {
    let (a, rest) = x.split_at(q);
    let (b, rest) = rest.split_at(q);
    let (c, rest) = rest.split_at(q);
    let (d, rest) = rest.split_at(q);
    let (e, f) = rest.split_at(q);
    (a, b, c, d, e, &f[..q])
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
                    let v = |r: usize| ([xr[at(r)]], [xi[at(r)]]);
                    let y = butterfly4::<1>([v(0), v(1), v(2), v(3)]);
                    for (m, z) in y.into_iter().enumerate() {
                        let z = if m > 0 && (s == 1 || p > 0) {
                            let k = m * p * s;
                            cmul([cos[k]], [-sin[k]], z.0, z.1)
                        } else {
                            z
                        };
                        yr[s * (4 * p + m) + j] = z.0[0];
                        yi[s * (4 * p + m) + j] = z.1[0];
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
