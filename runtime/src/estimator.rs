//! The per-sample estimator over a [`ModelView`] and caller-provided state.

use regimix_format::limits::MAX_INPUTS;
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
        let h = self.get(ring).to_f64();
        if h.is_finite() && h >= 0.0 && (h as usize) < len {
            h as usize
        } else {
            0
        }
    }

    fn push(&mut self, ring: usize, len: usize, v: T) {
        let next = self.head(ring, len) + 1;
        let h = if next >= len { 0 } else { next };
        self.set(ring, T::from_f64(h as f64));
        self.set(ring + 1 + h, v);
    }

    fn lagged(&self, ring: usize, len: usize, lag: usize) -> T {
        if lag >= len {
            return T::NAN;
        }
        let h = self.head(ring, len);
        // h < len and lag < len, so h + len − lag lies in [1, 2·len).
        let i = h + len - lag;
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
        for (j, &x) in inputs.iter().enumerate().take(MAX_INPUTS) {
            let Some(settings) = model.input(j) else {
                continue;
            };
            let (low, high) = (T::from_f64(settings.low), T::from_f64(settings.high));
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
                        T::from_f64(settings.mean)
                    }
                }
            };
            let (ring, len) = (self.layout.rings[j], self.layout.ring_len[j]);
            if first {
                self.fill(ring, len, effective);
            }
            self.push(ring, len, effective);
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
            self.evaluate(&target);
            let start = self.steady_state();
            self.fill(self.layout.out_ring, self.layout.out_len, start);
        }
        let (y, typicality, dominant) = self.evaluate(&target);
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

    /// Memberships (into the weights slots), typicality and the blended consequent. Returns
    /// (blended model-domain estimate, largest typicality, dominant regime).
    fn evaluate(&mut self, target: &regimix_format::TargetSettings) -> (T, T, u8) {
        use regimix_format::limits::{MAX_ANTECEDENT, MAX_REGIMES, MAX_REGRESSORS};
        let model = self.model;
        let c = model.n_regimes().min(MAX_REGIMES);
        let p = model.n_antecedent().min(MAX_ANTECEDENT);
        let nr = model.n_regressors().min(MAX_REGRESSORS);
        let m = target.fuzziness;
        let mut scaled = [T::ZERO; MAX_ANTECEDENT];
        for (a, s) in scaled.iter_mut().enumerate().take(p) {
            let j = model.antecedent_input(a).min(MAX_INPUTS - 1);
            let x = self.lagged(self.layout.rings[j], self.layout.ring_len[j], 0);
            *s = match model.input(j) {
                Some(st) => (x - T::from_f64(st.mean)) / T::from_f64(st.std),
                None => T::NAN,
            };
        }
        let mut values = [T::ZERO; MAX_REGRESSORS];
        for (r, v) in values.iter_mut().enumerate().take(nr) {
            *v = self.regressor_value(r);
        }
        let tiny = T::from_f64(1e-30);
        let mut d2 = [T::ZERO; MAX_REGIMES];
        let mut eta = [T::ONE; MAX_REGIMES];
        let mut local = [T::ZERO; MAX_REGIMES];
        let mut dmin = T::from_f64(f64::MAX);
        // Largest record: p + p(p+1)/2 + 2 + r values.
        const RECORD: usize =
            MAX_ANTECEDENT + MAX_ANTECEDENT * (MAX_ANTECEDENT + 1) / 2 + 2 + MAX_REGRESSORS;
        let mut buf = [T::ZERO; RECORD];
        let tri = p * (p + 1) / 2;
        for i in 0..c {
            // Decode the record once, in one tight loop, then work on plain arrays.
            for (dst, v) in buf.iter_mut().zip(model.regime_values(i)) {
                *dst = T::from_f64(v);
            }
            let (center, rest) = buf.split_at(p.min(RECORD));
            let (factor, rest) = rest.split_at(tri.min(rest.len()));
            let mut diff = [T::ZERO; MAX_ANTECEDENT];
            for ((d, s), c0) in diff.iter_mut().zip(&scaled).zip(center) {
                *d = *s - *c0;
            }
            let mut total = T::ZERO;
            let mut at = 0;
            for row in 0..p {
                let coefficients = factor.get(at..at + row + 1).unwrap_or(&[]);
                let mut y = T::ZERO;
                for (f, d) in coefficients.iter().zip(&diff) {
                    y = y + *f * *d;
                }
                total = total + y * y;
                at += row + 1;
            }
            d2[i] = if total > tiny { total } else { tiny };
            if d2[i] < dmin {
                dmin = d2[i];
            }
            eta[i] = rest.first().copied().unwrap_or(T::NAN);
            let offset = rest.get(1).copied().unwrap_or(T::NAN);
            let coefficients = rest.get(2..2 + nr).unwrap_or(&[]);
            // Four partial sums: shorter dependency chains than one running sum.
            let mut acc = [T::ZERO; 4];
            let mut chunks = coefficients.chunks_exact(4).zip(values.chunks_exact(4));
            for (cs, vs) in &mut chunks {
                for k in 0..4 {
                    acc[k] = acc[k] + cs[k] * vs[k];
                }
            }
            let tail = nr - nr % 4;
            for (cf, v) in coefficients.iter().zip(&values[..nr]).skip(tail) {
                acc[0] = acc[0] + *cf * *v;
            }
            local[i] = offset + ((acc[0] + acc[1]) + (acc[2] + acc[3]));
        }
        let exponent = T::from_f64(1.0 / (m - 1.0));
        let square = m == 2.0;
        let mut sum = T::ZERO;
        let mut best_t = T::ZERO;
        let mut u = [T::ZERO; MAX_REGIMES];
        for i in 0..c {
            let ratio = dmin / d2[i];
            u[i] = if square { ratio } else { ratio.powf(exponent) };
            sum = sum + u[i];
            let scaled_d = d2[i] / eta[i];
            let power = if square {
                scaled_d
            } else {
                scaled_d.powf(exponent)
            };
            let t = T::ONE / (T::ONE + power);
            if t > best_t {
                best_t = t;
            }
        }
        let mut dominant = 0u8;
        let mut best_u = T::ZERO;
        let mut blended = T::ZERO;
        for i in 0..c {
            let beta = u[i] / sum;
            self.set(self.layout.weights + i, beta);
            blended = blended + beta * local[i];
            if beta > best_u {
                best_u = beta;
                dominant = i as u8;
            }
        }
        (
            blended,
            if best_t.is_finite() { best_t } else { T::ZERO },
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
