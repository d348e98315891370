//! The per-sample estimator over a [`ModelView`] and caller-provided state.

use regimix_format::limits::{MAX_ANTECEDENT, MAX_INPUTS};
use regimix_format::transform::Transform;
use regimix_format::{ModelView, Source};

use crate::real::Real;
use crate::status::{LabOutcome, Status};

/// Where each part of the state lives, in words of the state slice.
#[derive(Debug, Clone, Copy)]
struct Layout {
    inputs: usize,
    rings: [usize; MAX_INPUTS],
    ring_len: [usize; MAX_INPUTS],
    out_ring: usize,
    out_len: usize,
    lab_ring: usize,
    lab_len: usize,
    weights: usize,
    total: usize,
    warmup: usize,
}

// Fixed words at the start of the state.
const COUNT: usize = 0;
const BIAS: usize = 1;
const LAST: usize = 2;
const HEADER_WORDS: usize = 3;

impl Layout {
    fn of(model: &ModelView<'_>) -> Layout {
        let n = model.n_inputs();
        let mut at = HEADER_WORDS;
        let inputs = at;
        at += 2 * n; // last good value, samples since it
        let mut rings = [0; MAX_INPUTS];
        let mut ring_len = [0; MAX_INPUTS];
        let mut warmup = model.max_output_lag() as usize;
        for j in 0..n.min(MAX_INPUTS) {
            let len = model.max_input_lag(j) as usize + 1;
            rings[j] = at;
            ring_len[j] = len;
            at += 1 + len; // head index, then the values
            warmup = warmup.max(len - 1);
        }
        let out_ring = at;
        let out_len = model.max_output_lag() as usize + 1;
        at += 1 + out_len;
        let lab_ring = at;
        let lab_len = model.lab_window() as usize + 1;
        at += 1 + lab_len;
        let weights = at;
        at += model.n_regimes();
        Layout {
            inputs,
            rings,
            ring_len,
            out_ring,
            out_len,
            lab_ring,
            lab_len,
            weights,
            total: at,
            warmup,
        }
    }
}

/// Words of state (of the estimator's float type) a model needs.
pub fn state_words(model: &ModelView<'_>) -> usize {
    Layout::of(model).total
}

/// Why an estimator could not be set up.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InitError {
    /// The state slice holds fewer words than [`state_words`].
    StateTooSmall {
        /// Words needed.
        needed: usize,
        /// Words given.
        given: usize,
    },
}

impl core::fmt::Display for InitError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            InitError::StateTooSmall { needed, given } => {
                write!(f, "estimator state needs {needed} words, got {given}")
            }
        }
    }
}

impl core::error::Error for InitError {}

/// One estimate.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Estimate<T> {
    /// Estimate in engineering units (the held last estimate under [`Status::FALLBACK`]).
    pub value: T,
    /// Raw model-domain estimate before bias (NaN under fallback).
    pub model_value: T,
    /// Flags; zero is good.
    pub status: Status,
    /// Largest typicality over the regimes, in [0, 1].
    pub typicality: T,
    /// Regime with the largest membership.
    pub dominant: u8,
}

/// Evaluates a model sample by sample. All memory is the caller's `state` slice.
#[derive(Debug)]
pub struct Estimator<'m, 's, T: Real> {
    model: ModelView<'m>,
    state: &'s mut [T],
    layout: Layout,
}

impl<'m, 's, T: Real> Estimator<'m, 's, T> {
    /// Sets up an estimator in `state` (at least [`state_words`] long) and resets it.
    pub fn new(model: ModelView<'m>, state: &'s mut [T]) -> Result<Self, InitError> {
        let layout = Layout::of(&model);
        if state.len() < layout.total {
            return Err(InitError::StateTooSmall {
                needed: layout.total,
                given: state.len(),
            });
        }
        let mut e = Estimator {
            model,
            state,
            layout,
        };
        e.reset();
        Ok(e)
    }

    /// Re-attaches to a state slice that an earlier estimator for the same model left (the C
    /// interface does this on every call); nothing is reset.
    pub fn resume(model: ModelView<'m>, state: &'s mut [T]) -> Result<Self, InitError> {
        let layout = Layout::of(&model);
        if state.len() < layout.total {
            return Err(InitError::StateTooSmall {
                needed: layout.total,
                given: state.len(),
            });
        }
        Ok(Estimator {
            model,
            state,
            layout,
        })
    }

    /// Forgets all history (after a restart or a long outage): warming up again, bias kept.
    pub fn reset(&mut self) {
        let bias = self.get(BIAS);
        for w in self.state.iter_mut() {
            *w = T::NAN;
        }
        self.set(COUNT, T::ZERO);
        self.set(BIAS, if bias.is_finite() { bias } else { T::ZERO });
        let n = self.model.n_inputs().min(MAX_INPUTS);
        let layout = self.layout;
        for ring in layout.rings[..n]
            .iter()
            .copied()
            .chain([layout.out_ring, layout.lab_ring])
        {
            self.set(ring, T::ZERO); // head index
        }
    }

    #[inline]
    fn get(&self, i: usize) -> T {
        self.state.get(i).copied().unwrap_or(T::NAN)
    }

    #[inline]
    fn set(&mut self, i: usize, v: T) {
        if let Some(w) = self.state.get_mut(i) {
            *w = v;
        }
    }

    /// Index of the newest entry; always below `len` (a corrupted head reads as 0). Ring indices
    /// wrap by comparison, not `%`: an integer division per access would dominate `step`.
    fn head(&self, ring: usize, len: usize) -> usize {
        // Saturating conversion through i32 (NaN → 0): one instruction, unlike f64 → usize.
        let h = self.get(ring).to_f64() as i32;
        if h >= 0 && (h as usize) < len {
            h as usize
        } else {
            0
        }
    }

    /// Appends `v`; returns the new head.
    fn push(&mut self, ring: usize, len: usize, v: T) -> usize {
        let next = self.head(ring, len) + 1;
        let h = if next >= len { 0 } else { next };
        self.set(ring, T::from_f64(f64::from(h as u32))); // h < len ≤ MAX_LAB_WINDOW + 1
        self.set(ring + 1 + h, v);
        h
    }

    fn lagged(&self, ring: usize, len: usize, lag: usize) -> T {
        self.lagged_at(ring, len, self.head(ring, len), lag)
    }

    /// The value `lag` samples before the newest, given the ring's head (`head < len`).
    #[inline]
    fn lagged_at(&self, ring: usize, len: usize, head: usize, lag: usize) -> T {
        if lag >= len {
            return T::NAN;
        }
        // head < len and lag < len, so head + len − lag lies in [1, 2·len).
        let i = head + len - lag;
        self.get(ring + 1 + if i >= len { i - len } else { i })
    }

    fn fill(&mut self, ring: usize, len: usize, v: T) {
        for k in 0..len {
            self.set(ring + 1 + k, v);
        }
    }

    /// The model this estimator runs.
    pub fn model(&self) -> &ModelView<'m> {
        &self.model
    }

    /// Current bias (model domain).
    pub fn bias(&self) -> T {
        self.get(BIAS)
    }

    /// Regime weights of the last estimate (they sum to one).
    pub fn weights(&self) -> &[T] {
        let start = self.layout.weights;
        let end = start + self.model.n_regimes();
        self.state.get(start..end).unwrap_or(&[])
    }

    fn transform(&self) -> Transform {
        self.model.transform()
    }

    /// Processes one sample of inputs (engineering units, in model input order).
    pub fn step(&mut self, inputs: &[T]) -> Estimate<T> {
        let model = self.model;
        let n = model.n_inputs();
        let mut status = 0u16;
        if inputs.len() != n {
            return self.fallback(Status::WRONG_INPUT_COUNT, T::ZERO, 0);
        }
        let first = !(self.get(COUNT).to_f64() > 0.0);
        let target = model.target();
        let hold = T::from_f64(f64::from(model.hold_limit()));
        let mut heads = [0usize; MAX_INPUTS];
        let mut current = [T::ZERO; MAX_INPUTS];
        for ((j, &x), record) in inputs
            .iter()
            .enumerate()
            .take(MAX_INPUTS)
            .zip(model.input_records())
        {
            let [low, high, mean] = fields::<T, 3>(record);
            let slot = self.layout.inputs + 2 * j;
            let effective = if x.is_finite() && x >= low && x <= high {
                self.set(slot, x);
                self.set(slot + 1, T::ZERO);
                x
            } else {
                let last = self.get(slot);
                let age = self.get(slot + 1) + T::ONE;
                self.set(slot + 1, age);
                if last.is_finite() && age <= hold {
                    status |= Status::INPUT_SUBSTITUTED;
                    last
                } else {
                    status |= Status::INPUT_INVALID;
                    if last.is_finite() {
                        last
                    } else {
                        mean
                    }
                }
            };
            let (ring, len) = (self.layout.rings[j], self.layout.ring_len[j]);
            if first {
                self.fill(ring, len, effective);
            }
            heads[j] = self.push(ring, len, effective);
            current[j] = effective;
        }
        let count = self.get(COUNT).to_f64();
        let count = if count.is_finite() { count } else { 0.0 };
        if count < self.layout.warmup as f64 {
            status |= Status::WARMING_UP;
        }
        self.set(COUNT, T::from_f64((count + 1.0).min(1e6)));

        // Antecedent memberships, typicality and the blended consequents, one pass over the
        // regimes' records.
        if first && model.uses_output_lags() {
            // Start the output history at the blended steady state (needs the memberships).
            self.evaluate(&target, &heads, &current);
            let start = self.steady_state();
            self.fill(self.layout.out_ring, self.layout.out_len, start);
        }
        let (y, typicality, dominant) = self.evaluate(&target, &heads, &current);
        if !(typicality >= T::from_f64(target.domain_threshold)) {
            status |= Status::OUT_OF_DOMAIN;
        }
        if model.uses_output_lags() {
            self.push(self.layout.out_ring, self.layout.out_len, y);
        }
        let trusted = status & Status::UNTRUSTED == 0 && y.is_finite();
        self.push(
            self.layout.lab_ring,
            self.layout.lab_len,
            if trusted { y } else { T::NAN },
        );
        if status & Status::INPUT_INVALID != 0 || !y.is_finite() {
            return self.fallback(status, typicality, dominant);
        }
        let biased = (y + self.get(BIAS)).to_f64();
        let mut value = self.transform().inverse(biased);
        if !(value >= target.low) || !(value <= target.high) {
            status |= Status::CLIPPED;
            value = if value > target.high {
                target.high
            } else {
                target.low
            };
        }
        let value = T::from_f64(value);
        self.set(LAST, value);
        Estimate {
            value,
            model_value: y,
            status: Status(status),
            typicality,
            dominant,
        }
    }

    fn fallback(&mut self, status: u16, typicality: T, dominant: u8) -> Estimate<T> {
        Estimate {
            value: self.get(LAST),
            model_value: T::NAN,
            status: Status(status | Status::FALLBACK),
            typicality,
            dominant,
        }
    }

    /// Memberships (into the weights slots), typicality and the blended consequent, given the
    /// input rings' heads and the inputs just pushed. Returns (blended model-domain estimate, largest typicality, dominant
    /// regime). The hot path: every model field is read straight from the validated bytes.
    fn evaluate(
        &mut self,
        target: &regimix_format::TargetSettings,
        heads: &[usize; MAX_INPUTS],
        current: &[T; MAX_INPUTS],
    ) -> (T, T, u8) {
        use regimix_format::limits::{MAX_REGIMES, MAX_REGRESSORS};
        let model = self.model;
        let layout = &self.layout;
        let weights_at = layout.weights;
        let p = model.n_antecedent().min(MAX_ANTECEDENT);
        let nr = model.n_regressors().min(MAX_REGRESSORS);
        let mut scaled = [T::ZERO; MAX_ANTECEDENT];
        for (s, record) in scaled.iter_mut().zip(model.antecedent_records()) {
            let &[j0, j1, ..] = record else {
                continue;
            };
            let j = usize::from(u16::from_le_bytes([j0, j1])).min(MAX_INPUTS - 1);
            let settings = model.input_record(j);
            let [mean, std] = fields::<T, 2>(settings.get(16..).unwrap_or(&[]));
            *s = (current[j] - mean) / std;
        }

        let out_head = self.head(layout.out_ring, layout.out_len);
        let mut values = [T::ZERO; MAX_REGRESSORS];
        for (v, record) in values.iter_mut().zip(model.regressor_records()) {
            let &[source, input, lag0, lag1] = record else {
                continue;
            };
            let lag = usize::from(u16::from_le_bytes([lag0, lag1]));
            *v = if source == 0 {
                let j = usize::from(input).min(MAX_INPUTS - 1);
                self.lagged_at(layout.rings[j], layout.ring_len[j], heads[j], lag)
            } else {
                self.lagged_at(layout.out_ring, layout.out_len, out_head, lag)
            };
        }

        // One pass over each regime's record: squared distance through the lower-triangular
        // factor, then η, the offset and the consequent.
        let tiny = T::from_f64(1e-30);
        let mut d2 = [T::ZERO; MAX_REGIMES];
        let (mut best_d2, mut best_eta) = (T::ONE, T::ZERO); // ratio +∞ until a regime is seen
        let mut dmin = T::from_f64(f64::MAX);
        let mut local = [T::ZERO; MAX_REGIMES];
        let geometry_bytes = 8 * (p + p * (p + 1) / 2);
        for ((record, d2), local) in model.regime_records().zip(&mut d2).zip(&mut local) {
            let (geometry, rest) = record.split_at(record.len().min(geometry_bytes));
            let total = squared_distance(p, geometry, &scaled);
            *d2 = if total > tiny { total } else { tiny };
            if *d2 < dmin {
                dmin = *d2;
            }
            // The largest typicality belongs to the smallest d²/η (the power is increasing);
            // compared as d²·η_best < d²_best·η (both positive), one division at the end.
            let [eta, offset] = fields::<T, 2>(rest);
            if *d2 * best_eta < best_d2 * eta {
                best_d2 = *d2;
                best_eta = eta;
            }
            // Four partial sums: shorter dependency chains than one running sum. The
            // coefficients are read four at a time, one range check per four.
            let mut acc = [T::ZERO; 4];
            let coefficients = rest.get(16..).unwrap_or(&[]);
            let mut words = coefficients.chunks_exact(32);
            let mut chunks = values[..nr].chunks_exact(4);
            for (vs, cs) in (&mut chunks).zip(&mut words) {
                for (k, (a, v)) in acc.iter_mut().zip(vs).enumerate() {
                    *a = *a + decode::<T>(&cs[8 * k..8 * k + 8]) * *v;
                }
            }
            let tail = coefficients.get(32 * (nr / 4)..).unwrap_or(&[]);
            for (v, c) in chunks.remainder().iter().zip(tail.chunks_exact(8)) {
                acc[0] = acc[0] + decode::<T>(c) * *v;
            }
            *local = offset + ((acc[0] + acc[1]) + (acc[2] + acc[3]));
        }

        let c = model.n_regimes().min(MAX_REGIMES);
        let m = target.fuzziness;
        let square = m == 2.0;
        let exponent = T::from_f64(1.0 / (m - 1.0));
        let power = |x: T| if square { x } else { x.powf(exponent) };
        let typicality = T::ONE / (T::ONE + power(best_d2 / best_eta));
        let mut u = [T::ZERO; MAX_REGIMES];
        let mut sum = T::ZERO;
        for (u, d2) in u.iter_mut().zip(&d2).take(c) {
            *u = power(dmin / *d2);
            sum = sum + *u;
        }
        let mut dominant = 0u8;
        let mut best_u = T::ZERO;
        let mut blended = T::ZERO;
        let scale = T::ONE / sum;
        for (i, (u, local)) in u.iter().zip(&local).enumerate().take(c) {
            let beta = *u * scale;
            self.set(weights_at + i, beta);
            blended = blended + beta * *local;
            if beta > best_u {
                best_u = beta;
                dominant = i as u8;
            }
        }
        (
            blended,
            if typicality.is_finite() {
                typicality
            } else {
                T::ZERO
            },
            dominant,
        )
    }

    fn regressor_value(&self, r: usize) -> T {
        match self.model.regressor(r) {
            Some(reg) => match reg.source {
                Source::Input(j) => {
                    let j = (j as usize).min(MAX_INPUTS - 1);
                    self.lagged(
                        self.layout.rings[j],
                        self.layout.ring_len[j],
                        reg.lag as usize,
                    )
                }
                Source::Output => {
                    self.lagged(self.layout.out_ring, self.layout.out_len, reg.lag as usize)
                }
            },
            None => T::NAN,
        }
    }

    /// Blended steady state with the current inputs (starts the output history).
    fn steady_state(&self) -> T {
        let mut y = T::ZERO;
        for i in 0..self.model.n_regimes() {
            let mut num = T::from_f64(self.model.offset(i));
            let mut feedback = T::ZERO;
            for r in 0..self.model.n_regressors() {
                let coefficient = T::from_f64(self.model.coefficient(i, r));
                match self.model.regressor(r).map(|g| g.source) {
                    Some(Source::Output) => feedback = feedback + coefficient,
                    Some(Source::Input(_)) => num = num + coefficient * self.regressor_value(r),
                    None => {}
                }
            }
            let denom = T::ONE - feedback;
            let yi = if denom.abs() > T::from_f64(1e-6) {
                num / denom
            } else {
                num
            };
            y = y + self.get(self.layout.weights + i) * yi;
        }
        y
    }

    /// Feeds back a lab result: `value` in engineering units for the material sampled `age`
    /// samples ago. Compares it with the raw estimate made then, rejects outliers, and moves the
    /// bias by the model's filter gain.
    pub fn lab_result(&mut self, value: T, age: u16) -> LabOutcome {
        let model = self.model;
        let target = model.target();
        let count = self.get(COUNT).to_f64();
        if age > model.lab_window() || !(f64::from(age) < count) {
            return LabOutcome::RejectedAge;
        }
        let raw = self.lagged(self.layout.lab_ring, self.layout.lab_len, age as usize);
        if !raw.is_finite() {
            return LabOutcome::RejectedStatus;
        }
        let Some(z) = model.transform().forward(value.to_f64()) else {
            return LabOutcome::RejectedValue;
        };
        let bias = self.get(BIAS).to_f64();
        let bias = if bias.is_finite() { bias } else { 0.0 };
        let residual = z - raw.to_f64();
        if !((residual - bias).abs() <= target.outlier_k * target.residual_sd) {
            return LabOutcome::RejectedOutlier;
        }
        let updated = (bias + target.bias_gain * (residual - bias))
            .clamp(-target.bias_limit, target.bias_limit);
        self.set(BIAS, T::from_f64(updated));
        LabOutcome::Applied(updated)
    }
}

/// ‖F (x − c)‖² for `p` antecedent variables, `geometry` holding c then F's rows packed
/// (little-endian f64; NaN if it is too short). Every dimension up to `MAX_ANTECEDENT` gets its
/// own inlined copy (constant `p`), so the loops unroll and the byte-range checks fold into one:
/// this is the hot spot of `step` (the twelve copies take about 2 KiB of flash on a Cortex-M4F).
fn squared_distance<T: Real>(p: usize, geometry: &[u8], x: &[T; MAX_ANTECEDENT]) -> T {
    match p {
        0 => T::ZERO,
        1 => distance_with::<T, 1>(geometry, x),
        2 => distance_with::<T, 2>(geometry, x),
        3 => distance_with::<T, 3>(geometry, x),
        4 => distance_with::<T, 4>(geometry, x),
        5 => distance_with::<T, 5>(geometry, x),
        6 => distance_with::<T, 6>(geometry, x),
        7 => distance_with::<T, 7>(geometry, x),
        8 => distance_with::<T, 8>(geometry, x),
        9 => distance_with::<T, 9>(geometry, x),
        10 => distance_with::<T, 10>(geometry, x),
        11 => distance_with::<T, 11>(geometry, x),
        _ => distance_with::<T, 12>(geometry, x),
    }
}

#[inline(always)]
fn distance_with<T: Real, const P: usize>(geometry: &[u8], x: &[T; MAX_ANTECEDENT]) -> T {
    let Some(geometry) = geometry.get(..8 * (P + P * (P + 1) / 2)) else {
        return T::NAN;
    };
    let word = |k: usize| geometry.get(8 * k..8 * k + 8).map_or(T::NAN, decode);
    let mut diff = [T::ZERO; P];
    for a in 0..P {
        diff[a] = x[a] - word(a);
    }
    let mut total = T::ZERO;
    let mut at = P;
    for row in 0..P {
        let mut y = T::ZERO;
        // `0..row + 1`, not `0..=row`: inclusive ranges defeat unrolling.
        for k in 0..row + 1 {
            y = y + word(at + k) * diff[k];
        }
        total = total + y * y;
        at += row + 1;
    }
    total
}

/// The first `N` little-endian `f64` fields of a model record, as `T` (all NaN if the record is
/// shorter). With `N` constant the reads compile to plain loads after one length check.
#[inline(always)]
fn fields<T: Real, const N: usize>(record: &[u8]) -> [T; N] {
    let mut out = [T::NAN; N];
    if let Some(bytes) = record.get(..8 * N) {
        for (o, b) in out.iter_mut().zip(bytes.chunks_exact(8)) {
            *o = decode(b);
        }
    }
    out
}

/// One little-endian `f64` field as `T` (NaN unless `bytes` holds exactly 8 bytes).
#[inline(always)]
fn decode<T: Real>(bytes: &[u8]) -> T {
    match bytes {
        &[a, b, c, d, e, f, g, h] => T::from_f64(f64::from_le_bytes([a, b, c, d, e, f, g, h])),
        _ => T::NAN,
    }
}
