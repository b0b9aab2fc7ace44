//! Welch's averaged, modified periodogram: a one-sided power density estimate from samples.
//!
//! Method: P. D. Welch, "The use of fast Fourier transform for the estimation of power
//! spectra: a method based on time averaging over short, modified periodograms", *IEEE Trans.
//! Audio Electroacoust.* AU-15(2), 70–73 (1967). Scaling and variance as restated in the
//! project's references (§3; Heinzel, Rüdiger, Schilling 2002; Percival & Walden 1993 §6.17).
//!
//! Conventions, stated once for every item in this module:
//!
//! * The record is cut into segments of `seg_len` (= L, even) samples that start every `hop`
//!   (= D) samples; trailing samples that do not fill a segment are not used. The number of
//!   segments is K = ⌊(N − L)/D⌋ + 1 for N ≥ L samples.
//! * Each segment is multiplied by the periodic (DFT-even) Hann window
//!   `w[n] = 0.5 − 0.5·cos(2πn/L)`, n = 0..L. **No detrending**: the segment mean is not
//!   removed (the equivalent of `detrend=False` in SciPy's `welch`). A constant offset therefore
//!   shows up in bins 0 and 1 only, because the periodic Hann window's transform is non-zero only
//!   at bins 0 and ±1.
//! * Bin k (0 ≤ k ≤ L/2) is at `f_k = k·fs/L` Hz. The one-sided density is
//!   `P_k = c_k·|Σ_n w_n x_n e^{−i2πkn/L}|² / (fs·Σ_n w_n²)`, with c_k = 2 for 0 < k < L/2
//!   and c_k = 1 at DC and Nyquist, averaged over the K segments. If the samples are in a unit
//!   u, the density is in u²/Hz and `Σ_k P_k·fs/L` is the window-weighted mean square in u².
//!
//! [`Welch`] is streaming: it keeps at most one batch of segments, so memory is bounded by a
//! few times `seg_len` (or 2^18 samples) per thread whatever the record length. [`welch`] is the one-shot form with 50 % overlap.

use std::fmt;
use std::ops::Range;
use std::sync::{Arc, OnceLock};

use realfft::num_complex::Complex;
use realfft::{RealFftPlanner, RealToComplex};

/// Samples a group of segments advances by, at most: segments are summed in groups of
/// ⌊`GROUP_SAMPLES` / hop⌋ (1 to [`MAX_GROUP`]) consecutive segments.
const GROUP_SAMPLES: usize = 1 << 18;
/// Most segments in one group.
const MAX_GROUP: usize = 256;
/// Most groups computed at once (memory: about this many groups' samples are buffered).
const MAX_BATCH: usize = 8;

/// Streaming Welch estimator: feed samples with [`Welch::push`] in chunks of any size, read
/// the estimate with [`Welch::finish`] at any time.
///
/// Segments are transformed on rayon's pool. The periodograms are summed in fixed groups of
/// consecutive segments (group g holds segments g·G .. (g+1)·G, G from the hop alone), each
/// group in segment order from zero, and the group sums are added in group order. So the
/// estimate is the same to the bit for any number of threads and any chunking of the pushes.
///
/// Memory: the samples of up to one batch of groups (min(threads, 8) groups, each about
/// 2^18 samples or one segment, whichever is longer) plus FFT buffers per group of a batch:
/// O(`seg_len` + 2^18) per thread, independent of how many samples are pushed.
pub struct Welch {
    seg_len: usize,
    hop: usize,
    sample_rate_hz: f64,
    window: Arc<[f64]>,
    /// Σ w², in window units squared.
    window_power: f64,
    fft: Arc<dyn RealToComplex<f64>>,
    /// Segments per group, G.
    group: usize,
    /// Samples from the start of the first segment not yet summed into `power_sum` (always
    /// the first segment of a group).
    buffer: Vec<f64>,
    /// Buffers of the groups of one batch, reused.
    work: Vec<GroupWork>,
    /// Σ over groups of their Σ over segments of |X_k|² (unscaled), k = 0..=L/2.
    power_sum: Vec<f64>,
    /// Segments summed into `power_sum`.
    segments: usize,
}

/// One group's FFT buffers and its periodogram sum.
struct GroupWork {
    /// FFT input; the forward transform destroys it, so each segment is copied in afresh.
    fft_in: Vec<f64>,
    fft_out: Vec<Complex<f64>>,
    scratch: Vec<Complex<f64>>,
    /// Σ over the group's segments of |X_k|², k = 0..=L/2.
    sum: Vec<f64>,
}

impl GroupWork {
    fn new(fft: &dyn RealToComplex<f64>) -> GroupWork {
        GroupWork {
            fft_in: fft.make_input_vec(),
            fft_out: fft.make_output_vec(),
            scratch: fft.make_scratch_vec(),
            sum: vec![0.0; fft.len() / 2 + 1],
        }
    }

    /// Sums the periodograms of `count` segments of `x`, `hop` apart, the first at x[0].
    fn run(
        &mut self,
        fft: &dyn RealToComplex<f64>,
        window: &[f64],
        x: &[f64],
        hop: usize,
        count: usize,
    ) {
        self.sum.fill(0.0);
        for s in 0..count {
            let seg = &x[s * hop..s * hop + window.len()];
            for ((dst, &v), &w) in self.fft_in.iter_mut().zip(seg).zip(window) {
                *dst = v * w;
            }
            fft.process_with_scratch(&mut self.fft_in, &mut self.fft_out, &mut self.scratch)
                .expect("FFT buffers were made by the plan, so their lengths match");
            for (acc, z) in self.sum.iter_mut().zip(&self.fft_out) {
                *acc += z.norm_sqr();
            }
        }
    }
}

/// Sums the periodograms of the first `segments` segments of `x` (`hop` apart) in groups of
/// `group`, the groups on rayon's pool with `work[i]` for group i, and adds the group sums to
/// `total` in group order.
#[allow(clippy::too_many_arguments)]
fn sum_groups(
    fft: &dyn RealToComplex<f64>,
    window: &[f64],
    x: &[f64],
    hop: usize,
    group: usize,
    segments: usize,
    work: &mut [GroupWork],
    total: &mut [f64],
) {
    use rayon::prelude::*;
    let groups = segments.div_ceil(group);
    work[..groups]
        .par_iter_mut()
        .enumerate()
        .with_max_len(1)
        .for_each(|(g, w)| {
            let count = group.min(segments - g * group);
            w.run(fft, window, &x[g * group * hop..], hop, count);
        });
    for w in &work[..groups] {
        for (t, s) in total.iter_mut().zip(&w.sum) {
            *t += s;
        }
    }
}

impl fmt::Debug for Welch {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("Welch")
            .field("seg_len", &self.seg_len)
            .field("hop", &self.hop)
            .field("sample_rate_hz", &self.sample_rate_hz)
            .field("segments", &self.segments)
            .field("buffered", &self.buffer.len())
            .finish_non_exhaustive()
    }
}

impl Welch {
    /// A new estimator for segments of `seg_len` samples starting every `hop` samples, for
    /// samples taken at `sample_rate_hz` (samples per second, e.g. 48000.0).
    ///
    /// `hop = seg_len / 2` is the usual 50 % overlap; `hop = seg_len` is no overlap. The
    /// batch size (not the result) follows the current rayon pool's thread count.
    ///
    /// # Panics
    /// If `seg_len` is odd or < 2, if `hop` is not in `1..=seg_len`, or if `sample_rate_hz`
    /// is not finite and positive. Callers that take these from a user validate them first.
    pub fn new(seg_len: usize, hop: usize, sample_rate_hz: f64) -> Welch {
        assert!(
            seg_len >= 2 && seg_len % 2 == 0,
            "Welch segment length must be even and at least 2, got {seg_len}"
        );
        assert!(
            (1..=seg_len).contains(&hop),
            "Welch hop must be between 1 and the segment length {seg_len}, got {hop}"
        );
        assert!(
            sample_rate_hz.is_finite() && sample_rate_hz > 0.0,
            "sample rate must be finite and positive, got {sample_rate_hz} Hz"
        );
        let window: Arc<[f64]> = hann_periodic(seg_len).into();
        let window_power = window.iter().map(|w| w * w).sum();
        let fft = RealFftPlanner::<f64>::new().plan_fft_forward(seg_len);
        let group = (GROUP_SAMPLES / hop).clamp(1, MAX_GROUP);
        let batch = rayon::current_num_threads().clamp(1, MAX_BATCH);
        Welch {
            seg_len,
            hop,
            sample_rate_hz,
            window,
            window_power,
            work: (0..batch).map(|_| GroupWork::new(fft.as_ref())).collect(),
            fft,
            group,
            buffer: Vec::new(),
            power_sum: vec![0.0; seg_len / 2 + 1],
            segments: 0,
        }
    }

    /// Segment length L in samples.
    pub fn seg_len(&self) -> usize {
        self.seg_len
    }

    /// Hop D between segment starts, in samples.
    pub fn hop(&self) -> usize {
        self.hop
    }

    /// Sample rate in Hz (samples per second).
    pub fn sample_rate_hz(&self) -> f64 {
        self.sample_rate_hz
    }

    /// Number of complete segments pushed so far (the segments [`Welch::finish`] averages).
    pub fn segments(&self) -> usize {
        self.segments + self.buffered_segments()
    }

    /// Complete segments in the buffer, not yet summed.
    fn buffered_segments(&self) -> usize {
        if self.buffer.len() < self.seg_len {
            0
        } else {
            (self.buffer.len() - self.seg_len) / self.hop + 1
        }
    }

    /// Samples a batch of `groups` whole groups spans.
    fn batch_span(&self, groups: usize) -> usize {
        (groups * self.group - 1) * self.hop + self.seg_len
    }

    /// Forgets all samples and segments, keeping the plan and buffers, to analyse another
    /// record with the same settings.
    pub fn reset(&mut self) {
        self.buffer.clear();
        self.power_sum.fill(0.0);
        self.segments = 0;
    }

    /// Feeds the next samples of the record (any chunk size, including empty). Samples are in
    /// the record's unit u; the density comes out in u²/Hz.
    pub fn push(&mut self, x: &[f64]) {
        let batch = self.work.len();
        let span = self.batch_span(batch);
        let mut rest = x;
        while !rest.is_empty() {
            let take = (span - self.buffer.len()).min(rest.len());
            self.buffer.extend_from_slice(&rest[..take]);
            rest = &rest[take..];
            if self.buffer.len() == span {
                let segments = batch * self.group;
                sum_groups(
                    self.fft.as_ref(),
                    &self.window,
                    &self.buffer,
                    self.hop,
                    self.group,
                    segments,
                    &mut self.work,
                    &mut self.power_sum,
                );
                self.segments += segments;
                self.buffer.drain(..segments * self.hop);
            }
        }
    }

    /// The estimate from the segments completed so far (samples still buffered for an
    /// unfinished segment are not included). With no complete segment, `psd` is all zeros and
    /// `segments` is 0.
    pub fn finish(&self) -> Spectrum {
        let n_bins = self.seg_len / 2 + 1;
        // The complete segments still buffered: fewer than one batch of groups.
        let rest = self.buffered_segments();
        let mut power_sum = self.power_sum.clone();
        if rest > 0 {
            let mut work: Vec<GroupWork> = (0..rest.div_ceil(self.group))
                .map(|_| GroupWork::new(self.fft.as_ref()))
                .collect();
            sum_groups(
                self.fft.as_ref(),
                &self.window,
                &self.buffer,
                self.hop,
                self.group,
                rest,
                &mut work,
                &mut power_sum,
            );
        }
        let segments = self.segments + rest;
        // Same arithmetic as numpy's rfftfreq(L, 1/fs), so the frequencies agree bit for bit.
        let bin_hz = 1.0 / (self.seg_len as f64 * (1.0 / self.sample_rate_hz));
        let frequencies_hz = (0..n_bins).map(|k| k as f64 * bin_hz).collect();
        let psd = if segments == 0 {
            vec![0.0; n_bins]
        } else {
            let scale = 1.0 / (self.sample_rate_hz * self.window_power * segments as f64);
            power_sum
                .iter()
                .enumerate()
                .map(|(k, &p)| {
                    let one_sided = if k == 0 || k == n_bins - 1 { 1.0 } else { 2.0 };
                    p * one_sided * scale
                })
                .collect()
        };
        Spectrum {
            frequencies_hz,
            psd,
            segments,
            seg_len: self.seg_len,
            hop: self.hop,
            sample_rate_hz: self.sample_rate_hz,
            window: Arc::clone(&self.window),
            correlations: OnceLock::new(),
        }
    }
}

/// One-shot Welch estimate of `x` (samples in unit u, taken at `sample_rate_hz` Hz) with
/// segments of `seg_len` samples (even), periodic Hann window and 50 % overlap. PSD in u²/Hz.
///
/// # Panics
/// As [`Welch::new`].
pub fn welch(x: &[f64], seg_len: usize, sample_rate_hz: f64) -> Spectrum {
    let mut w = Welch::new(seg_len, seg_len / 2, sample_rate_hz);
    w.push(x);
    w.finish()
}

/// The periodic (DFT-even) Hann window of length `len`: `0.5 − 0.5·cos(2πn/len)`.
pub(crate) fn hann_periodic(len: usize) -> Vec<f64> {
    let step = 2.0 * std::f64::consts::PI / len as f64;
    (0..len)
        .map(|n| 0.5 - 0.5 * (step * n as f64).cos())
        .collect()
}

/// A one-sided Welch density estimate with what is needed to judge its uncertainty.
#[derive(Debug, Clone)]
pub struct Spectrum {
    /// Bin frequencies `k·fs/L` in Hz, k = 0..=L/2.
    pub frequencies_hz: Vec<f64>,
    /// One-sided power density in u²/Hz (u = the samples' unit), one value per bin.
    ///
    /// As in SciPy and the references' §3 formula, the DC and Nyquist bins are not doubled:
    /// they are half-width bins of the one-sided axis, so for a density S that is smooth there
    /// they estimate S/2, and `Σ_k psd[k]·Δf` is the total power. [`BandEstimate::psd_mean`]
    /// (from [`Spectrum::bands`] and [`Spectrum::log_bands`]) accounts for this.
    pub psd: Vec<f64>,
    /// Number of segments K averaged.
    pub segments: usize,
    /// Segment length L in samples.
    pub seg_len: usize,
    /// Hop D between segment starts in samples.
    pub hop: usize,
    /// Sample rate in Hz.
    pub sample_rate_hz: f64,
    window: Arc<[f64]>,
    /// Lazily computed window correlation table, see [`Correlations`].
    correlations: OnceLock<Arc<Correlations>>,
}

/// The mean of a group of adjacent bins of a [`Spectrum`], with its equivalent degrees of
/// freedom.
#[derive(Debug, Clone, PartialEq)]
pub struct BandEstimate {
    /// Lower band edge in Hz: half a bin below the first bin (0 for the DC bin).
    pub f_lo_hz: f64,
    /// Upper band edge in Hz: half a bin above the last bin (fs/2 for the Nyquist bin).
    pub f_hi_hz: f64,
    /// Arithmetic mean of the bin frequencies in Hz.
    pub f_center_hz: f64,
    /// Mean one-sided density over the band in u²/Hz: the band's power `Σ psd[k]·Δf` divided
    /// by its width `f_hi_hz − f_lo_hz`. Away from DC and Nyquist this is the arithmetic mean
    /// of the bins; the half-width DC and Nyquist bins count at their full density.
    pub psd_mean: f64,
    /// The bins averaged (indices into `Spectrum::psd`).
    pub bins: Range<usize>,
    /// Equivalent degrees of freedom ν of `psd_mean` (`psd_mean/S ≈ χ²_ν/ν`), from
    /// [`Spectrum::band_dof`].
    pub dof: f64,
}

/// `t[j][m] = |Σ_n w_n w_{n+jD} e^{−i2πmn/L}|² / (Σ_n w_n²)²` for lags j with jD < L and
/// m = 0..=L/2: the correlation between the periodograms of two segments j hops apart at two
/// bins m apart, for white Gaussian input.
#[derive(Debug)]
struct Correlations {
    seg_len: usize,
    table: Vec<Vec<f64>>,
}

impl Correlations {
    fn new(window: &[f64], hop: usize) -> Correlations {
        let len = window.len();
        let power: f64 = window.iter().map(|w| w * w).sum();
        let fft = RealFftPlanner::<f64>::new().plan_fft_forward(len);
        let mut input = fft.make_input_vec();
        let mut output = fft.make_output_vec();
        let mut scratch = fft.make_scratch_vec();
        let lags = len.div_ceil(hop);
        let table = (0..lags)
            .map(|j| {
                let shift = j * hop;
                input.fill(0.0);
                for (n, dst) in input[..len - shift].iter_mut().enumerate() {
                    *dst = window[n] * window[n + shift];
                }
                fft.process_with_scratch(&mut input, &mut output, &mut scratch)
                    .expect("FFT buffers were made by the plan, so their lengths match");
                output
                    .iter()
                    .map(|z| z.norm_sqr() / (power * power))
                    .collect()
            })
            .collect();
        Correlations {
            seg_len: len,
            table,
        }
    }

    /// Table value at lag `j` and any integer bin offset `m` (folded: |R(m)| is even and
    /// L-periodic in m for a real window).
    fn at(&self, j: usize, m: usize) -> f64 {
        let m = m % self.seg_len;
        let m = m.min(self.seg_len - m);
        self.table[j][m]
    }
}

impl Spectrum {
    /// Bin spacing Δf = fs/L in Hz.
    pub fn bin_width_hz(&self) -> f64 {
        self.sample_rate_hz / self.seg_len as f64
    }

    fn correlations(&self) -> &Correlations {
        self.correlations
            .get_or_init(|| Arc::new(Correlations::new(&self.window, self.hop)))
    }

    /// Overlap correlation ρ_j = (Σ_n w_n w_{n+jD})² / (Σ_n w_n²)² of the periodograms of two
    /// segments `j` hops apart (dimensionless; 0 when the segments do not overlap). For the
    /// periodic Hann window at 50 % overlap ρ_1 = 1/36 (references §3).
    pub fn overlap_correlation(&self, j: usize) -> f64 {
        let c = self.correlations();
        if j < c.table.len() {
            c.table[j][0]
        } else {
            0.0
        }
    }

    /// Equivalent degrees of freedom ν of `psd[bin]` (`psd[bin]/S ≈ χ²_ν/ν` for Gaussian noise
    /// whose density S is flat over the window's main lobe). Same as
    /// [`Spectrum::band_dof`] for the one bin `bin..bin + 1`.
    ///
    /// Interior bins give Welch's `ν = 2K / (1 + 2 Σ_{j=1}^{K−1} (1 − j/K) ρ_j)` with ρ_j from
    /// [`Spectrum::overlap_correlation`]; for Hann at 50 % overlap that is `36K²/(19K − 1)`.
    /// The DC and Nyquist bins (real-valued transforms) get exactly half of that.
    ///
    /// # Panics
    /// If `bin > seg_len/2`.
    pub fn dof(&self, bin: usize) -> f64 {
        self.band_dof(bin..bin + 1)
    }

    /// Equivalent degrees of freedom ν of the band mean over `bins`
    /// ([`BandEstimate::psd_mean`]; `mean/S ≈ χ²_ν/ν`).
    ///
    /// Computed in general from the actual window and hop, not from a closed form: for
    /// Gaussian noise with a density that is flat over the band (white noise exactly),
    /// `Cov(Q_{s,k}, Q_{s',k'}) = |R_j(k−k')|² + |R_j(k+k')|²` (Isserlis' theorem) for the
    /// normalised periodograms `Q = |X|²/(σ²Σw²)`, with j = s' − s and
    /// `R_j(m) = Σ_n w_n w_{n+jD} e^{−i2πmn/L} / Σ_n w_n²`; the second term is the
    /// real-signal term that matters near DC and Nyquist. With weights c_k = 1 inside and ½ at
    /// DC and Nyquist (the one-sided convention of [`Spectrum::psd`]),
    ///
    /// `ν = 2 (K·Σc_k)² / Σ_{|j|<K} (K − |j|) Σ_{k,k' ∈ bins} c_k c_k' (|R_j(k−k')|² + |R_j(k+k')|²)`.
    ///
    /// This includes the correlation of adjacent bins within a segment (4/9 at lag 1 and 1/36
    /// at lag 2 for Hann) and across overlapping segments. Without overlap it reduces to the
    /// references' §3 closed form `ν·M²/(M + (8/9)(M−1) + (1/18)(M−2))` for interior bands;
    /// with overlap it is slightly smaller than that form, which ignores cross-segment,
    /// cross-bin terms. Returns 0 when no segment was averaged.
    ///
    /// Cost: the first call computes ⌈L/D⌉ FFTs of length L (cached); each call is then
    /// O(min(K, ⌈L/D⌉)·M).
    ///
    /// # Panics
    /// If `bins` is empty or reaches past bin L/2.
    pub fn band_dof(&self, bins: Range<usize>) -> f64 {
        assert!(
            bins.start < bins.end && bins.end <= self.psd.len(),
            "band {bins:?} must be non-empty and within bins 0..{}",
            self.psd.len()
        );
        if self.segments == 0 {
            return 0.0;
        }
        let corr = self.correlations();
        let k_seg = self.segments;
        let m_bins = bins.end - bins.start;
        let nyquist = self.psd.len() - 1;
        let edges: Vec<usize> = [0, nyquist]
            .into_iter()
            .filter(|e| bins.contains(e))
            .collect();
        let f = |j: usize, k: usize, k2: usize| corr.at(j, k.abs_diff(k2)) + corr.at(j, k + k2);
        let lags = k_seg.min(corr.table.len());
        let mut var = 0.0;
        for j in 0..lags {
            // Unweighted Σ_{k,k'} f: in the first term offset d occurs M − |d| times, in the
            // second the sum s = k + k' occurs M − |s − (a + b − 1)| times.
            let mut total = m_bins as f64 * corr.at(j, 0);
            for d in 1..m_bins {
                total += 2.0 * (m_bins - d) as f64 * corr.at(j, d);
            }
            let mid = bins.start + bins.end - 1;
            for s in 2 * bins.start..=2 * (bins.end - 1) {
                total += (m_bins - s.abs_diff(mid)) as f64 * corr.at(j, s);
            }
            // Weights ½ at the edge bins: Σ c c f = Σ f − Σ_{e} Σ_{k'} f(e, k') + ¼ Σ_{e,e'} f(e, e').
            for &e in &edges {
                total -= bins.clone().map(|k| f(j, e, k)).sum::<f64>();
                for &e2 in &edges {
                    total += 0.25 * f(j, e, e2);
                }
            }
            let weight = if j == 0 { k_seg } else { 2 * (k_seg - j) } as f64;
            var += weight * total;
        }
        let mean = (k_seg as f64) * (m_bins as f64 - 0.5 * edges.len() as f64);
        2.0 * mean * mean / var
    }

    /// The band estimate over `bins` (mean density, edges, ν).
    pub fn band(&self, bins: Range<usize>) -> BandEstimate {
        let df = self.bin_width_hz();
        let f_lo_hz = ((bins.start as f64 - 0.5) * df).max(0.0);
        let f_hi_hz = ((bins.end as f64 - 0.5) * df).min(0.5 * self.sample_rate_hz);
        // Width in bins: M, less half a bin for each of DC and Nyquist inside the band.
        let nyquist = self.psd.len() - 1;
        let half_bins = [0, nyquist].iter().filter(|e| bins.contains(e)).count();
        let width_bins = bins.len() as f64 - 0.5 * half_bins as f64;
        let psd_mean = self.psd[bins.clone()].iter().sum::<f64>() / width_bins;
        BandEstimate {
            f_lo_hz,
            f_hi_hz,
            f_center_hz: 0.5 * (bins.start + bins.end - 1) as f64 * df,
            psd_mean,
            dof: self.band_dof(bins.clone()),
            bins,
        }
    }

    /// Consecutive bands of exactly `bins_per_band` (M) bins, the first starting at bin
    /// `k_min`; bins left over at the top that do not fill a band are not used. Each band's
    /// ν comes from [`Spectrum::band_dof`].
    ///
    /// Bins below 3 sit within the Hann main lobe of DC (references §3); tests of a shape
    /// usually start at `k_min ≥ 3`.
    ///
    /// # Panics
    /// If `bins_per_band` is 0.
    pub fn bands(&self, k_min: usize, bins_per_band: usize) -> Vec<BandEstimate> {
        assert!(bins_per_band > 0, "a band needs at least one bin");
        let n = self.psd.len();
        (k_min..n)
            .step_by(bins_per_band)
            .map(|a| a..a + bins_per_band)
            .take_while(|r| r.end <= n)
            .map(|r| self.band(r))
            .collect()
    }

    /// Bands of logarithmically growing width from bin `k_min` up to and including the
    /// Nyquist bin, `per_decade` bands per decade of frequency.
    ///
    /// Band i covers bins `[b_i, b_{i+1})` with `b_0 = k_min` and
    /// `b_{i+1} = max(b_i + 1, round(k_min·10^{(i+1)/per_decade}))`, so every band holds at
    /// least one bin and narrow low bands are single bins; the last band ends at the Nyquist
    /// bin and may be shorter than its ratio asks. Each band's ν comes from
    /// [`Spectrum::band_dof`].
    ///
    /// # Panics
    /// If `k_min` is 0 (a logarithmic grid cannot start at DC) or `per_decade` is 0.
    pub fn log_bands(&self, k_min: usize, per_decade: usize) -> Vec<BandEstimate> {
        assert!(k_min >= 1, "logarithmic bands must start at bin 1 or above");
        assert!(per_decade >= 1, "need at least one band per decade");
        let n = self.psd.len();
        let mut out = Vec::new();
        let mut start = k_min;
        let mut i = 1;
        while start < n {
            let edge = (k_min as f64 * 10f64.powf(i as f64 / per_decade as f64)).round();
            let end = if edge >= n as f64 {
                n
            } else {
                (edge as usize).max(start + 1)
            };
            out.push(self.band(start..end));
            start = end;
            i += 1;
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn spectrum_of_zeros(seg_len: usize, hop: usize, segments: usize) -> Spectrum {
        let mut w = Welch::new(seg_len, hop, 1000.0);
        w.push(&vec![0.0; seg_len + (segments - 1) * hop]);
        let s = w.finish();
        assert_eq!(s.segments, segments);
        s
    }

    /// Welch 1967 / references §3: ν = 36K²/(19K − 1) for Hann at 50 % overlap (exact for the
    /// periodic window, whose overlap product is periodic over the half segment, so interior
    /// bins 2..=L/2−2 see no real-signal term).
    #[test]
    fn bin_dof_matches_hann_half_overlap_closed_form() {
        let l = 64;
        for k in 1..=64usize {
            let s = spectrum_of_zeros(l, l / 2, k);
            let kf = k as f64;
            let expected = 36.0 * kf * kf / (19.0 * kf - 1.0);
            for bin in 2..=l / 2 - 2 {
                let got = s.dof(bin);
                assert!(
                    (got - expected).abs() <= 1e-12 * expected,
                    "K={k} bin {bin}: ν={got}, closed form {expected}"
                );
            }
            for edge in [0, l / 2] {
                let got = s.dof(edge);
                assert!(
                    (got - expected / 2.0).abs() <= 1e-12 * expected,
                    "K={k} bin {edge}: ν={got}, expected half of {expected}"
                );
            }
        }
    }

    /// Harris 1978 (as in references §3): Hann overlap correlation 1/6 at 50 % and 65.9 % at
    /// 75 % (table value rounded to 0.1 %); ρ_j is its square.
    #[test]
    fn overlap_correlation_matches_harris_table() {
        let half = spectrum_of_zeros(128, 64, 4);
        assert!((half.overlap_correlation(1) - 1.0 / 36.0).abs() < 1e-14);
        assert_eq!(half.overlap_correlation(2), 0.0);
        assert!((half.overlap_correlation(0) - 1.0).abs() < 1e-14);
        let quarter = spectrum_of_zeros(128, 32, 8);
        let c = quarter.overlap_correlation(1).sqrt();
        assert!((c - 0.659).abs() <= 0.0005, "75 % overlap correlation {c}");
    }

    /// Without overlap the general band ν must equal the references' §3 closed form
    /// ν·M²/(M + (8/9)(M−1) + (1/18)(M−2)) with ν = 2K (interior bands, Hann).
    #[test]
    fn band_dof_without_overlap_matches_adjacent_bin_formula() {
        let l = 256;
        for k in [1usize, 3, 16] {
            let s = spectrum_of_zeros(l, l, k);
            for m in [2usize, 3, 8, 32] {
                let mf = m as f64;
                let nu = 2.0 * k as f64;
                let expected = nu * mf * mf / (mf + 8.0 / 9.0 * (mf - 1.0) + (mf - 2.0) / 18.0);
                let got = s.band_dof(10..10 + m);
                assert!(
                    (got - expected).abs() <= 1e-12 * expected,
                    "K={k} M={m}: ν={got}, closed form {expected}"
                );
            }
        }
    }

    /// With 50 % overlap the cross-segment, cross-bin terms only add variance, so the general
    /// ν is at most the §3 closed form (K=16, M=8: 134 predicted, 132 simulated there). Each
    /// added term is at most ρ_1 = 1/36 (|R_1(m)| ≤ R_1(0) for a non-negative window), and
    /// there are 2(K−1)·(2M² − M) of them, which bounds ν from below.
    #[test]
    fn band_dof_with_overlap_is_below_closed_form() {
        let (k, m) = (16.0_f64, 8.0_f64);
        let s = spectrum_of_zeros(256, 128, 16);
        let nu = 36.0 * k * k / (19.0 * k - 1.0);
        let closed = nu * m * m / (m + 8.0 / 9.0 * (m - 1.0) + (m - 2.0) / 18.0);
        let var_closed = 2.0 * (k * m).powi(2) / closed;
        let floor =
            2.0 * (k * m).powi(2) / (var_closed + 2.0 * (k - 1.0) * (2.0 * m * m - m) / 36.0);
        let got = s.band_dof(20..28);
        assert!(
            got <= closed * (1.0 + 1e-12) && got >= floor,
            "ν={got}, closed form {closed}, floor {floor}"
        );
    }

    /// The group sums make the estimate the same to the bit on 1 and 2 threads and for any
    /// chunking of the pushes. The record holds many batches of groups plus a rest that
    /// `finish` sums, and the estimate equals a plain DFT of every segment (to rounding).
    #[test]
    fn estimate_is_identical_for_one_and_two_threads() {
        let (l, fs) = (64usize, 1000.0);
        let x: Vec<f64> = (0..200_000)
            .map(|n| ((n * 7919) % 1013) as f64 / 1013.0 - 0.5)
            .collect();
        let run = |threads: usize, chunk: usize| {
            let pool = rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .expect("a pool");
            pool.install(|| {
                let mut w = Welch::new(l, l / 2, fs);
                for c in x.chunks(chunk) {
                    w.push(c);
                }
                w.finish()
            })
        };
        let one = run(1, 1 << 16);
        let k_seg = (x.len() - l) / (l / 2) + 1;
        assert_eq!(one.segments, k_seg);
        assert!(k_seg > 10 * MAX_GROUP, "more segments than a few batches");
        for (threads, chunk) in [(2, 1 << 16), (2, 1000), (1, 333), (2, x.len())] {
            let s = run(threads, chunk);
            assert_eq!(s.segments, k_seg);
            assert_eq!(s.psd, one.psd, "{threads} threads, chunks of {chunk}");
        }
        // Plain DFT of every windowed segment, summed in order.
        let w = hann_periodic(l);
        let power: f64 = w.iter().map(|v| v * v).sum();
        for k in [0usize, 1, 7, l / 2] {
            let mut p = 0.0;
            for s in 0..k_seg {
                let (mut re, mut im) = (0.0f64, 0.0f64);
                for n in 0..l {
                    let a = -2.0 * std::f64::consts::PI * (k * n) as f64 / l as f64;
                    re += w[n] * x[s * l / 2 + n] * a.cos();
                    im += w[n] * x[s * l / 2 + n] * a.sin();
                }
                p += re * re + im * im;
            }
            let c = if k == 0 || k == l / 2 { 1.0 } else { 2.0 };
            let expected = c * p / (fs * power * k_seg as f64);
            assert!(
                (one.psd[k] - expected).abs() <= 1e-11 * expected,
                "bin {k}: {} against the plain DFT's {expected}",
                one.psd[k]
            );
        }
    }

    #[test]
    fn chunked_pushes_equal_one_shot_bit_for_bit() {
        let x: Vec<f64> = (0..5000)
            .map(|n| ((n * 7919) % 1013) as f64 / 1013.0 - 0.5)
            .collect();
        let one = welch(&x, 256, 8000.0);
        for chunk in [1usize, 7, 128, 255, 256, 1000] {
            let mut w = Welch::new(256, 128, 8000.0);
            for c in x.chunks(chunk) {
                w.push(c);
            }
            let s = w.finish();
            assert_eq!(s.psd, one.psd, "chunk {chunk}");
            assert_eq!(s.segments, one.segments);
        }
        assert_eq!(one.segments, (5000 - 256) / 128 + 1);
    }

    /// Periodic Hann: a constant only reaches bins 0 and 1 (exact math; rounding only).
    #[test]
    fn constant_offset_stays_in_bins_zero_and_one() {
        let s = welch(&[0.75; 4096], 512, 100.0);
        // Bin 0: |Σw·c|²/(fs Σw²) with Σw = L/2, Σw² = 3L/8 → c²·(2L/3)/fs.
        let dc = 0.75f64.powi(2) * (2.0 * 512.0 / 3.0) / 100.0;
        assert!((s.psd[0] - dc).abs() < 1e-12 * dc);
        assert!((s.psd[1] - dc / 2.0).abs() < 1e-12 * dc);
        for (k, p) in s.psd.iter().enumerate().skip(2) {
            assert!(*p < 1e-28 * dc, "bin {k}: {p}");
        }
    }

    /// Parseval: for a sine centred on bin k0 ≥ 2 the window-weighted mean square is exactly
    /// A²/2, so Σ psd·Δf = A²/2.
    #[test]
    fn bin_centred_sine_power_is_half_amplitude_squared() {
        let (l, k0, a, fs) = (1024usize, 37.0, 1.7, 2048.0);
        let x: Vec<f64> = (0..l * 8)
            .map(|n| a * (2.0 * std::f64::consts::PI * k0 * n as f64 / l as f64 + 0.3).sin())
            .collect();
        let s = welch(&x, l, fs);
        let total: f64 = s.psd.iter().sum::<f64>() * s.bin_width_hz();
        assert!((total - a * a / 2.0).abs() < 1e-12, "{total}");
        assert_eq!(s.frequencies_hz[37], 74.0);
    }

    #[test]
    fn no_complete_segment_gives_zeros_and_no_dof() {
        let mut w = Welch::new(64, 32, 10.0);
        w.push(&[1.0; 63]);
        let s = w.finish();
        assert_eq!(s.segments, 0);
        assert!(s.psd.iter().all(|&p| p == 0.0));
        assert_eq!(s.dof(5), 0.0);
        assert_eq!(s.frequencies_hz.len(), 33);
    }

    #[test]
    fn log_bands_cover_every_bin_once() {
        let s = spectrum_of_zeros(4096, 2048, 2);
        let bands = s.log_bands(1, 10);
        assert_eq!(bands[0].bins.start, 1);
        assert_eq!(bands.last().unwrap().bins.end, 2049);
        for pair in bands.windows(2) {
            assert_eq!(pair[0].bins.end, pair[1].bins.start);
        }
        assert!(bands.iter().all(|b| !b.bins.is_empty()));
        // About 10 bands per decade over 3.3 decades, fewer where bins are single.
        assert!(bands.len() > 20 && bands.len() < 40, "{}", bands.len());
        let fixed = s.bands(3, 8);
        assert_eq!(fixed.len(), (2049 - 3) / 8);
        assert_eq!(fixed[1].bins, 11..19);
    }

    #[test]
    #[should_panic(expected = "even")]
    fn odd_segment_length_is_refused() {
        let _ = Welch::new(101, 50, 1.0);
    }

    #[test]
    #[should_panic(expected = "hop")]
    fn hop_longer_than_segment_is_refused() {
        let _ = Welch::new(100, 101, 1.0);
    }
}
