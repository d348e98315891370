//! The per-sample estimator over a [`ModelView`] and caller-provided state.

use regimix_format::limits::{MAX_ANTECEDENT, MAX_INPUTS, MAX_REGIMES, MAX_REGRESSORS};
use regimix_format::transform::Transform;
use regimix_format::{ModelView, Regressor, Source};

use crate::real::{Real, Word};
use crate::status::{LabOutcome, Status};

/// Where each part of the state lives, in words of the state slice.
#[derive(Debug, Clone, Copy)]
struct Layout {
    /// Word of each ring's head index (its values follow): the inputs' rings, then the output's
    /// at [`OUTPUT`]. 32-bit: the C interface rebuilds the layout on every call, so it is kept
    /// small. These rings are mirrored: each value is written twice, `len` words apart, so that
    /// any lag reads at `head + len − lag` without wrapping (see [`tap`]).
    rings: [u32; RINGS],
    /// Values in each ring (each held twice).
    ring_len: [u32; RINGS],
    lab_ring: usize,
    lab_len: usize,
    /// First of the regressors' taps ([`tap`]), one word each, written by `reset`.
    taps: usize,
    weights: usize,
    total: usize,
    warmup: usize,
}

// Fixed words at the start of the state.
/// Samples processed since the last reset, capped at [`COUNT_CAP`] (exact in `f32` too).
const COUNT: usize = 0;
const COUNT_CAP: f64 = 1e6;
const BIAS: usize = 1;
const LAST: usize = 2;
const HEADER_WORDS: usize = 3;

/// Rings in [`Layout`]: one per input, then the output's.
const RINGS: usize = MAX_INPUTS + 1;
/// Index of the output's ring in [`Layout`].
const OUTPUT: usize = MAX_INPUTS;
/// Slots of `step`'s array of ring heads: [`RINGS`] rounded up to a power of two, so that a
/// ring number masked to it needs no bounds check.
const HEADS: usize = RINGS.next_power_of_two();

impl Layout {
    /// Ring `i`'s head word and its number of values.
    #[inline]
    fn ring(&self, i: usize) -> (usize, usize) {
        let at = self.rings.get(i).map_or(0, |&w| w as usize);
        (at, self.ring_len.get(i).map_or(1, |&w| w as usize))
    }

    fn of(model: &ModelView<'_>) -> Layout {
        let n = model.n_inputs();
        let mut at = HEADER_WORDS;
        let mut rings = [0; RINGS];
        let mut ring_len = [0; RINGS];
        let mut warmup = model.max_output_lag() as usize;
        for j in 0..n.min(MAX_INPUTS) {
            // One block per input, read in one piece by `step`: last good value, samples since
            // it, then the ring (head index, values twice over). The blocks follow the header
            // back to back: `step` splits them off in order.
            let len = model.max_input_lag(j) as usize + 1;
            rings[j] = (at + 2) as u32;
            ring_len[j] = len as u32;
            at += 3 + 2 * len;
            warmup = warmup.max(len - 1);
        }
        let out_len = model.max_output_lag() as usize + 1;
        rings[OUTPUT] = at as u32;
        ring_len[OUTPUT] = out_len as u32;
        at += 1 + 2 * out_len;
        // The raw estimates for lab results: read once per result, so not mirrored.
        let lab_ring = at;
        let lab_len = model.lab_window() as usize + 1;
        at += 1 + lab_len;
        // Where each regressor's value lives, worked out once by `reset` (so that the C
        // interface, which re-opens the estimator on every call, does not redo it).
        let taps = at;
        at += model.n_regressors();
        let weights = at;
        at += model.n_regimes();
        // Then scratch for the regressor values of the sample being evaluated: kept in the
        // caller's state so `step` does not clear a stack array of `MAX_REGRESSORS` words.
        at += model.n_regressors();
        Layout {
            rings,
            ring_len,
            lab_ring,
            lab_len,
            taps,
            weights,
            total: at,
            warmup,
        }
    }
}

/// Words of state an `f64` estimator needs for `model` (the C interface's count).
pub fn state_words(model: &ModelView<'_>) -> usize {
    state_words_for::<f64>(model)
}

/// Words of state an estimator computing in `T` needs for `model`: an `f32` estimator also
/// keeps its parameters converted to `f32` there.
pub fn state_words_for<T: Real>(model: &ModelView<'_>) -> usize {
    Layout::of(model).total + copy_words::<T>(model)
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
pub struct Estimator<'m: 's, 's, T: Real> {
    model: ModelView<'m>,
    /// The state's history and scratch words ([`Layout`]).
    state: &'s mut [T],
    layout: Layout,
    hot: Hot<'s, T>,
}

/// Signature of the squared-distance kernels ([`distances_with`]).
type DistanceKernel<T> = fn(
    core::slice::ChunksExact<'_, <T as Real>::Word>,
    &[T; MAX_ANTECEDENT],
    &mut [T; MAX_REGIMES],
);

/// Words of the parameter copy an `f32` estimator keeps after its [`Layout`] (none for `f64`):
/// section C (4 words per input) and section F, converted once so that `step` converts none.
fn copy_words<T: Real>(model: &ModelView<'_>) -> usize {
    if T::COPIES_PARAMETERS {
        (model.input_section().len() + model.regime_section().len()) / 8
    } else {
        0
    }
}

/// What `step` reads from the model on every sample, looked up once when an estimator is set
/// up: the sections (range-checked then), the counts, the target's limits and the distance
/// kernel for the antecedent's dimension.
#[derive(Debug, Clone)]
struct Hot<'h, T: Real> {
    /// Section C, one record of four words per input.
    inputs: &'h [T::Word],
    /// Input of each antecedent variable (the view checked each against the input count).
    antecedent: [u8; MAX_ANTECEDENT],
    /// Section F in blocks of two regimes (an odd count's last block ends with padding).
    regimes: core::slice::ChunksExact<'h, T::Word>,
    /// Antecedent variables, regressors and regimes, each capped at its limit.
    p: usize,
    nr: usize,
    c: usize,
    distances: DistanceKernel<T>,
    /// Run `step`'s copy compiled for AVX ([`crate::wide`]); same results, fewer instructions.
    wide: bool,
    /// The estimate's range (engineering units).
    target_low: T,
    target_high: T,
    /// Fuzziness 2 (the memberships need no power), else the exponent 1/(m − 1).
    square: bool,
    exponent: T,
    /// Samples until every lag buffer is full, and the cap on the sample count.
    warmup: T,
    count_cap: T,
    transform: Transform,
    threshold: T,
    hold: T,
}

impl<'h, T: Real> Hot<'h, T> {
    /// The hot fields of `model`, its parameters read from `copy` (the converted sections C
    /// and F, for `f32`) or from the file itself (`f64`); `layout` is the model's [`Layout`].
    fn of(model: &ModelView<'h>, layout: &Layout, copy: &'h [T]) -> Self {
        let (input_copy, regime_copy) =
            copy.split_at(copy.len().min(model.input_section().len() / 8));
        let block =
            2 * regimix_format::view::regime_len(model.n_antecedent(), model.n_regressors()) / 8;
        // Section B's first five fields (the rest serve lab results).
        let [_, target_low, target_high, fuzziness, threshold] =
            fields::<f64, 5>(model.target_record());
        let p = model.n_antecedent().min(MAX_ANTECEDENT);
        // Built on every call of the C interface: only the model's own entries, from the raw
        // records (the view checked them).
        let mut antecedent = [0u8; MAX_ANTECEDENT];
        for (slot, record) in antecedent.iter_mut().zip(model.antecedent_records()) {
            *slot = record.first().copied().unwrap_or(0); // input < n_inputs ≤ MAX_INPUTS
        }
        Hot {
            inputs: T::words(model.input_section(), input_copy),
            antecedent,
            regimes: T::words(model.regime_section(), regime_copy).chunks_exact(block.max(1)),
            p,
            nr: model.n_regressors().min(MAX_REGRESSORS),
            c: model.n_regimes().min(MAX_REGIMES),
            distances: kernel::<T>(p),
            wide: cfg!(target_arch = "x86_64") && wide_available(),
            target_low: T::from_f64(target_low),
            target_high: T::from_f64(target_high),
            square: fuzziness == 2.0,
            exponent: T::from_f64(1.0 / (fuzziness - 1.0)),
            warmup: T::from_f64(layout.warmup as f64),
            count_cap: T::from_f64(COUNT_CAP),
            transform: model.transform(),
            threshold: T::from_f64(threshold),
            hold: T::from_f64(f64::from(model.hold_limit())),
        }
    }
}

/// `$run` with the constant `$dim` set to the antecedent dimension `$p` (1 … MAX_ANTECEDENT;
/// anything larger as MAX_ANTECEDENT, which the view rules out): one copy per dimension.
#[rustfmt::skip]
macro_rules! with_dimension {
    ($p:expr, $dim:ident => $run:expr) => {
        match $p {
            1 => { const $dim: usize = 1; $run }
            2 => { const $dim: usize = 2; $run }
            3 => { const $dim: usize = 3; $run }
            4 => { const $dim: usize = 4; $run }
            5 => { const $dim: usize = 5; $run }
            6 => { const $dim: usize = 6; $run }
            7 => { const $dim: usize = 7; $run }
            8 => { const $dim: usize = 8; $run }
            9 => { const $dim: usize = 9; $run }
            10 => { const $dim: usize = 10; $run }
            11 => { const $dim: usize = 11; $run }
            _ => { const $dim: usize = MAX_ANTECEDENT; $run }
        }
    };
}

/// The distance kernel for `p` antecedent variables.
fn kernel<T: Real>(p: usize) -> DistanceKernel<T> {
    with_dimension!(p, P => distances_with::<T, P, LANES> as DistanceKernel<T>)
}

/// [`kernel`]'s choice made in line, so that the kernel compiles into its caller (the copy of
/// `step` compiled for AVX).
#[inline(always)]
fn distances_in_line<T: Real>(
    p: usize,
    pairs: core::slice::ChunksExact<'_, T::Word>,
    x: &[T; MAX_ANTECEDENT],
    d2: &mut [T; MAX_REGIMES],
) {
    with_dimension!(p, P => distances_with::<T, P, LANES>(pairs, x, d2))
}

#[cfg(target_arch = "x86_64")]
fn wide_available() -> bool {
    crate::wide::avx()
}

#[cfg(not(target_arch = "x86_64"))]
fn wide_available() -> bool {
    false
}

impl<'m: 's, 's, T: Real> Estimator<'m, 's, T> {
    /// Sets up an estimator in `state` (at least [`state_words_for`] long: [`state_words`] for
    /// `f64`) and resets it.
    pub fn new(model: ModelView<'m>, state: &'s mut [T]) -> Result<Self, InitError> {
        let (layout, state, copy) = Self::split(&model, state)?;
        // The parameters the kernels read, converted once (f32 only; empty for f64).
        let words = model
            .input_section()
            .chunks_exact(8)
            .chain(model.regime_section().chunks_exact(8));
        for (w, bytes) in copy.iter_mut().zip(words) {
            *w = decode(bytes);
        }
        let mut e = Estimator {
            model,
            state,
            layout,
            hot: Hot::of(&model, &layout, copy),
        };
        e.reset();
        Ok(e)
    }

    /// Re-attaches to a state slice that an earlier estimator for the same model left (the C
    /// interface does this on every call); nothing is reset, and an `f32` estimator's
    /// parameter copy is the one `new` wrote.
    pub fn resume(model: ModelView<'m>, state: &'s mut [T]) -> Result<Self, InitError> {
        let (layout, state, copy) = Self::split(&model, state)?;
        Ok(Estimator {
            model,
            state,
            layout,
            hot: Hot::of(&model, &layout, copy),
        })
    }

    /// The layout, the state's history and scratch words, and the parameter copy after them.
    #[allow(clippy::type_complexity)]
    fn split(
        model: &ModelView<'_>,
        state: &'s mut [T],
    ) -> Result<(Layout, &'s mut [T], &'s mut [T]), InitError> {
        let layout = Layout::of(model);
        let (total, copy) = (layout.total, copy_words::<T>(model));
        if state.len() < total + copy {
            return Err(InitError::StateTooSmall {
                needed: total + copy,
                given: state.len(),
            });
        }
        let (state, rest) = state.split_at_mut(total);
        Ok((layout, state, rest.get_mut(..copy).unwrap_or(&mut [])))
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
        for ring in (0..n)
            .chain([OUTPUT])
            .map(|i| layout.ring(i).0)
            .chain([layout.lab_ring])
        {
            self.set(ring, T::from_index(0)); // head index
        }
        for r in 0..self.model.n_regressors() {
            if let Some(reg) = self.model.regressor(r) {
                let (ring, back) = ring_and_back(reg);
                self.set(layout.taps + r, T::from_index(tap(&layout, ring, back)));
            }
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

    #[inline]
    fn head(&self, ring: usize, len: usize) -> usize {
        head_of(self.state, ring, len)
    }

    /// Appends `v`; returns the new head.
    #[inline]
    fn push(&mut self, ring: usize, len: usize, v: T) -> usize {
        let next = self.head(ring, len) + 1;
        let h = if next >= len { 0 } else { next };
        self.set(ring, T::from_index(h as u32)); // h < len ≤ MAX_LAB_WINDOW + 1
        self.set(ring + 1 + h, v);
        h
    }

    fn lagged(&self, ring: usize, len: usize, lag: usize) -> T {
        lagged_at(self.state, ring, len, self.head(ring, len) as u16, lag)
    }

    /// Sets every value of a mirrored ring (both copies).
    fn fill(&mut self, ring: usize, len: usize, v: T) {
        for k in 0..2 * len {
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

    /// Processes one sample of inputs (engineering units, in model input order).
    // On x86-64 only a choice between two copies, in line in the caller: one call, not two.
    #[cfg_attr(target_arch = "x86_64", inline)]
    pub fn step(&mut self, inputs: &[T]) -> Estimate<T> {
        #[cfg(target_arch = "x86_64")]
        {
            if self.hot.wide {
                // SAFETY: `wide` is set only where the processor has AVX ([`crate::wide::avx`]).
                #[allow(unsafe_code)]
                return unsafe { self.step_avx(inputs) };
            }
            self.step_narrow(inputs)
        }
        #[cfg(not(target_arch = "x86_64"))]
        self.step_with::<false>(inputs)
    }

    /// [`Self::step`] without AVX (x86-64).
    #[cfg(target_arch = "x86_64")]
    #[inline(never)]
    fn step_narrow(&mut self, inputs: &[T]) -> Estimate<T> {
        self.step_with::<false>(inputs)
    }

    /// [`Self::step`] compiled for AVX: the same operations, so the same results.
    #[cfg(target_arch = "x86_64")]
    #[allow(unsafe_code)]
    #[target_feature(enable = "avx")]
    unsafe fn step_avx(&mut self, inputs: &[T]) -> Estimate<T> {
        self.step_with::<true>(inputs)
    }

    /// [`Self::step`]; `WIDE` computes the distances in line (the AVX copy).
    #[inline(always)]
    fn step_with<const WIDE: bool>(&mut self, inputs: &[T]) -> Estimate<T> {
        let model = self.model;
        let n = model.n_inputs();
        let mut status = 0u16;
        if inputs.len() != n {
            return self.fallback(Status::WRONG_INPUT_COUNT, T::ZERO, 0);
        }
        let first = !(self.get(COUNT) > T::ZERO);
        let hold = self.hot.hold;
        let mut heads = [0u16; HEADS];
        let mut standardized = [T::ZERO; MAX_INPUTS];
        // The inputs' blocks follow the header back to back (see `Layout::of`): split off one
        // at a time, one length check each.
        let mut blocks = self.state.get_mut(HEADER_WORDS..).unwrap_or(&mut []);
        for (((&x, record), (head_out, standard)), &len) in inputs
            .iter()
            .zip(self.hot.inputs.chunks_exact(4))
            .zip(heads.iter_mut().zip(standardized.iter_mut()))
            .zip(&self.layout.ring_len)
        {
            let [low, high, mean, std] = words::<T, 4>(record);
            let len = len as usize;
            let Some((block, rest)) = blocks.split_at_mut_checked(3 + 2 * len) else {
                break;
            };
            blocks = rest;
            let [last, age, head, values @ ..] = block else {
                continue;
            };
            // The view checked that the bounds are finite.
            let effective = if x.within(low, high) {
                *last = x;
                *age = T::ZERO;
                x
            } else {
                *age = *age + T::ONE;
                if last.is_finite() && *age <= hold {
                    status |= Status::INPUT_SUBSTITUTED;
                    *last
                } else {
                    status |= Status::INPUT_INVALID;
                    if last.is_finite() {
                        *last
                    } else {
                        mean
                    }
                }
            };
            // Push, into both copies: heads are bit patterns below `len` (see `head_of`).
            let (values, mirror) = values.split_at_mut(len.min(values.len()));
            let next = head.to_index().wrapping_add(1);
            let h = if next < values.len() { next } else { 0 };
            *head = T::from_index(h as u32); // h < len ≤ MAX_LAG + 1
            if let (Some(v), Some(m)) = (values.get_mut(h), mirror.get_mut(h)) {
                *v = effective;
                *m = effective;
            }
            *head_out = h as u16;
            *standard = (effective - mean) / std;
        }
        if first {
            // Start every input's history at its first value.
            for j in 0..n.min(MAX_INPUTS) {
                let (ring, len) = self.layout.ring(j);
                let newest = self.lagged(ring, len, 0);
                self.fill(ring, len, newest);
            }
        }
        let count = self.get(COUNT);
        let count = if count.is_finite() { count } else { T::ZERO };
        if count < self.hot.warmup {
            status |= Status::WARMING_UP;
        }
        let next = count + T::ONE;
        let cap = self.hot.count_cap;
        self.set(COUNT, if next < cap { next } else { cap });

        // Antecedent memberships, typicality and the blended consequents, one pass over the
        // regimes' records.
        if first && model.uses_output_lags() {
            // Start the output history at the blended steady state (needs the memberships).
            self.evaluate_first(&mut heads, &standardized);
            let start = self.steady_state();
            let (ring, len) = self.layout.ring(OUTPUT);
            self.fill(ring, len, start);
        }
        let (y, typicality, dominant) = self.evaluate::<WIDE>(&mut heads, &standardized);
        if !(typicality >= self.hot.threshold) {
            status |= Status::OUT_OF_DOMAIN;
        }
        if model.uses_output_lags() {
            let (ring, len) = self.layout.ring(OUTPUT);
            let h = self.push(ring, len, y);
            self.set(ring + 1 + h + len, y); // its mirror
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
        let mut value = T::untransform(self.hot.transform, y + self.get(BIAS));
        let (target_low, target_high) = (self.hot.target_low, self.hot.target_high);
        if !(value >= target_low) || !(value <= target_high) {
            status |= Status::CLIPPED;
            value = if value > target_high {
                target_high
            } else {
                target_low
            };
        }
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
    /// input rings' heads after this sample's push and the inputs standardized, (x − mean) / std.
    /// Returns (blended model-domain estimate, largest typicality, dominant regime). The hot
    /// path: every model field is read straight from the validated bytes.
    // In line where `step` has a copy compiled for AVX (so that this compiles into it);
    // elsewhere, out of line as before (a Cortex-M4F's flash).
    #[cfg_attr(target_arch = "x86_64", inline(always))]
    fn evaluate<const WIDE: bool>(
        &mut self,
        heads: &mut [u16; HEADS],
        standardized: &[T; MAX_INPUTS],
    ) -> (T, T, u8) {
        let hot = &self.hot;
        let layout = &self.layout;
        let (p, nr, c) = (hot.p, hot.nr, hot.c);
        // The history (read) and the scratch words (written) are disjoint parts of the state.
        let (history, scratch) = self
            .state
            .split_at_mut(layout.weights.min(self.state.len()));
        let (weights, values) = scratch.split_at_mut(c.min(scratch.len()));
        let values = values.get_mut(..nr).unwrap_or(&mut []);

        let mut scaled = [T::ZERO; MAX_ANTECEDENT];
        // Two at a time: the distance kernels read them two at a time, and a 16-byte read of two
        // 8-byte writes waits for them to reach the cache instead of taking them from the
        // store buffer. An odd `p` fills one slot past the last variable, which is not read.
        // MAX_INPUTS is a power of two: the mask only keeps the index provably in bounds.
        let standard = |j: u8| standardized[usize::from(j) & (MAX_INPUTS - 1)];
        let (pairs, _) = scaled.as_chunks_mut::<2>();
        let (inputs, _) = hot.antecedent.as_chunks::<2>();
        for (pair, &[j0, j1]) in pairs.iter_mut().zip(inputs).take(p.div_ceil(2)) {
            *pair = [standard(j0), standard(j1)];
        }

        let (out_ring, out_len) = layout.ring(OUTPUT);
        heads[OUTPUT] = head_of(history, out_ring, out_len) as u16;
        // Each regressor's tap ([`tap`], written by `reset`): its ring in the low byte, above
        // it the word its value sits at when the ring's head is 0. A corrupted tap reads some
        // word of the state or NaN.
        let taps = history.get(layout.taps..layout.taps + nr).unwrap_or(&[]);
        let fetch = |tap: T| {
            let tap = tap.to_index();
            let head = usize::from(heads[tap & (HEADS - 1)]);
            history.get((tap >> 8) + head).copied().unwrap_or(T::NAN)
        };
        for (v, &tap) in values.iter_mut().zip(taps) {
            *v = fetch(tap);
        }
        let values = &*values;

        // Squared distances, then (in place) their reciprocals: u_i for fuzziness 2.
        let mut u = [T::ZERO; MAX_REGIMES];
        if WIDE {
            distances_in_line::<T>(p, hot.regimes.clone(), &scaled, &mut u);
        } else {
            (hot.distances)(hot.regimes.clone(), &scaled, &mut u);
        }
        let mut local = [T::ZERO; MAX_REGIMES];
        let pass = regime_pass(hot.regimes.clone(), p, c, values, &mut u, &mut local);

        // Memberships β_i = u_i / Σu with u_i = (d²_min / d²_i)^(1/(m−1)). For m = 2 the scale
        // of u cancels, so u_i = 1/d²_i and both sums come from the regime pass: the estimate
        // then waits for one division after the last regime.
        let (square, exponent) = (hot.square, hot.exponent);
        let power = |x: T| if square { x } else { x.powf(exponent) };
        let typicality = T::ONE / (T::ONE + power(pass.best_ratio));
        let (mut sum, mut numerator) = (pass.inverse_sum, pass.inverse_blend);
        if !square {
            (sum, numerator) = (T::ZERO, T::ZERO);
            for (u, local) in u.iter_mut().zip(&local).take(c) {
                *u = (pass.dmin * *u).powf(exponent); // (d²_min / d²_i)^(1/(m−1)) ≤ 1
                sum = sum + *u;
                numerator = numerator + *u * *local;
            }
        }
        let blended = numerator / sum;
        let scale = T::ONE / sum;
        let mut dominant = 0u8;
        let mut best_u = T::ZERO;
        for (i, (w, u)) in weights.iter_mut().zip(&u).enumerate() {
            *w = *u * scale;
            if *u > best_u {
                best_u = *u;
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

    /// [`Self::evaluate`] for a first sample (out of line where `evaluate` is in line: it runs
    /// once).
    #[cfg_attr(target_arch = "x86_64", inline(never))]
    #[cfg_attr(not(target_arch = "x86_64"), inline(always))]
    fn evaluate_first(&mut self, heads: &mut [u16; HEADS], standardized: &[T; MAX_INPUTS]) {
        self.evaluate::<false>(heads, standardized);
    }

    fn regressor_value(&self, r: usize) -> T {
        match self.model.regressor(r) {
            Some(reg) => {
                let (ring, back) = ring_and_back(reg);
                let (at, len) = self.layout.ring(ring);
                self.lagged(at, len, back)
            }
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

/// The ring a regressor reads and how many entries behind its newest: an output's ring holds
/// y(k−1) as its newest entry, so output lag L is L − 1 entries back.
fn ring_and_back(reg: Regressor) -> (usize, usize) {
    match reg.source {
        Source::Input(j) => (usize::from(j).min(MAX_INPUTS - 1), usize::from(reg.lag)),
        Source::Output => (OUTPUT, usize::from(reg.lag).saturating_sub(1)),
    }
}

/// Regressor tap for `back` entries behind the newest of ring `ring`: the ring in the low byte,
/// above it the state word of the value when the head is 0. In a mirrored ring of `len` values
/// at `at` with head `h`, that value sits at `at + 1 + h + len − back` (head < len and
/// 1 ≤ len − back ≤ len, so within the two copies): no wrap to test on every read.
fn tap(layout: &Layout, ring: usize, back: usize) -> u32 {
    let (at, len) = layout.ring(ring);
    // The view checked every lag against the rings' lengths (back < len ≤ MAX_LAG + 1). Below
    // 2^24 at the format's limits (2 · 33 · 1,025 + 4,097 + … words).
    let ahead = len - back.min(len - 1);
    ((at + 1 + ahead) as u32) << 8 | ring as u32
}

/// Index of the newest entry of the ring at `ring` (`len` values); always below `len` (a
/// corrupted head reads as 0). Heads are kept as bit patterns ([`Real::from_index`]) and wrap by
/// comparison, not `%`: a conversion or an integer division per access would dominate `step`.
#[inline]
fn head_of<T: Real>(state: &[T], ring: usize, len: usize) -> usize {
    let h = state.get(ring).map_or(0, |w| w.to_index());
    if h < len {
        h
    } else {
        0
    }
}

/// The value `lag` samples before the newest of the ring at `ring` with `len` values, given its
/// head. Rings are sized from the model's own lags, so `lag < len` and `head < len` hold and
/// `head + len − lag` lies in `[1, 2·len)`; were they broken, the wrapped index would read NaN
/// past the state's end or another word of the state, never out of bounds.
#[inline]
fn lagged_at<T: Real>(state: &[T], ring: usize, len: usize, head: u16, lag: usize) -> T {
    let i = (usize::from(head) + len).wrapping_sub(lag);
    let i = if i >= len { i - len } else { i };
    state
        .get(ring.wrapping_add(1).wrapping_add(i))
        .copied()
        .unwrap_or(T::NAN)
}

/// What the regime pass hands to the membership step.
struct Pass<T> {
    /// Smallest squared distance.
    dmin: T,
    /// Σ 1/d²_i and Σ y_i/d²_i: the memberships' sums for fuzziness 2.
    inverse_sum: T,
    inverse_blend: T,
    /// Smallest d²_i/η_i (the largest typicality; +∞ until a regime is seen).
    best_ratio: T,
}

/// One pass over the first `c` regimes for `p` antecedent variables (section F's blocks of two
/// regimes with their words interleaved), given their squared distances in `d2`
/// ([`distances_with`]): per block, both regimes' consequents side by side ([`consequents`]),
/// their d² floored at 1e-30 and replaced by its reciprocal and their d²/η; then, one regime at
/// a time and in order, the smallest d², the smallest d²/η and the membership sums.
#[cfg_attr(target_arch = "x86_64", inline(always))] // into `step`'s AVX copy
fn regime_pass<T: Real>(
    pairs: core::slice::ChunksExact<'_, T::Word>,
    p: usize,
    c: usize,
    values: &[T],
    d2: &mut [T; MAX_REGIMES],
    local: &mut [T; MAX_REGIMES],
) -> Pass<T> {
    let mut pass = Pass {
        dmin: T::from_f64(f64::MAX),
        inverse_sum: T::ZERO,
        inverse_blend: T::ZERO,
        best_ratio: T::from_f64(f64::INFINITY),
    };
    let tiny = T::from_f64(1e-30);
    // η, the offset and the coefficients follow the center and the factor.
    let geometry = p + p * (p + 1) / 2;
    let (d2, _) = d2.as_chunks_mut::<2>();
    let (local, _) = local.as_chunks_mut::<2>();
    // Not `zip`: the block count of a `ChunksExact` costs an integer division.
    let mut slots = d2.iter_mut().zip(local.iter_mut());
    for (k, block) in pairs.enumerate() {
        let Some((inverse, local)) = slots.next() else {
            break;
        };
        let (eta, y) = consequents::<T, 2>(block, geometry, values);
        // Lane by lane, so that each pair compiles to one vector operation.
        let d = inverse.map(|t| if t > tiny { t } else { tiny });
        *inverse = d.map(|d| T::ONE / d); // ≤ 1e30: finite in f32 too
        let ratio = [d[0] / eta[0], d[1] / eta[1]];
        pass.add(d[0], inverse[0], ratio[0], y[0]);
        local[0] = y[0];
        // An odd count's padding regime gets no slot.
        if 2 * k + 1 < c {
            pass.add(d[1], inverse[1], ratio[1], y[1]);
            local[1] = y[1];
        }
    }
    pass
}

impl<T: Real> Pass<T> {
    /// Takes in the next regime: its floored d², 1/d², d²/η and local model output.
    #[inline(always)]
    fn add(&mut self, d2: T, inverse: T, ratio: T, output: T) {
        if d2 < self.dmin {
            self.dmin = d2;
        }
        // The largest typicality belongs to the smallest d²/η (the power is increasing); a NaN
        // ratio (a block too short) is never taken.
        if ratio < self.best_ratio {
            self.best_ratio = ratio;
        }
        self.inverse_sum = self.inverse_sum + inverse;
        self.inverse_blend = self.inverse_blend + inverse * output;
    }
}

/// η and the local model's output, offset + coefficients · `values`, of the `L` regimes of a
/// block whose words are interleaved (regime `l`'s word `k` at byte `8·(L·k + l)`), reading
/// from word `geometry` on: η, the offset, then one coefficient per value (NaN if the block is
/// too short). Each regime's output is the same sum in the same order whatever `L`: four
/// partial sums (value k into sum k mod 4), then (s₀ + s₁) + (s₂ + s₃).
#[inline(always)]
fn consequents<T: Real, const L: usize>(
    block: &[T::Word],
    geometry: usize,
    values: &[T],
) -> ([T; L], [T; L]) {
    let start = L * geometry;
    let Some(rest) = block.get(start..start + L * (2 + values.len())) else {
        return ([T::NAN; L], [T::NAN; L]);
    };
    let (head, coefficients) = rest.split_at(2 * L);
    let mut acc = [[T::ZERO; L]; 4];
    let groups = coefficients.chunks_exact(4 * L);
    let tail = groups.remainder();
    let chunks = values.chunks_exact(4);
    let remainder = chunks.remainder();
    // Zipped, not indexed: where the loops stay rolled (opt-level "s") no read needs a check.
    for (vs, cs) in chunks.zip(groups) {
        for ((a, v), ws) in acc.iter_mut().zip(vs).zip(cs.chunks_exact(L)) {
            for (a, w) in a.iter_mut().zip(ws) {
                *a = *a + w.get() * *v;
            }
        }
    }
    for (v, ws) in remainder.iter().zip(tail.chunks_exact(L)) {
        for (a, w) in acc[0].iter_mut().zip(ws) {
            *a = *a + w.get() * *v;
        }
    }
    let eta = core::array::from_fn(|lane| head[lane].get());
    let output = core::array::from_fn(|lane| {
        let offset = head[L + lane].get();
        let [s0, s1, s2, s3] = acc.map(|a| a[lane]);
        offset + ((s0 + s1) + (s2 + s3))
    });
    (eta, output)
}

/// ‖F (x − c)‖² of every regime for `P` antecedent variables, into `d2` (NaN for a block too
/// short; an odd count's padding regime fills the slot after the last regime). Section F holds
/// the regimes in blocks of two with their words interleaved: with `L` = 2 ([`LANES`] on
/// x86-64 and AArch64) both regimes of a block are computed in lockstep, their words read side
/// by side; with `L` = 1 one at a time. Every dimension up to `MAX_ANTECEDENT` gets its own
/// copy (chosen once per sample), so the loops unroll and the byte-range checks fold into one
/// per block: this is the hot spot of `step`.
#[cfg_attr(target_arch = "x86_64", inline(always))] // into `step`'s AVX copy
fn distances_with<T: Real, const P: usize, const L: usize>(
    pairs: core::slice::ChunksExact<'_, T::Word>,
    x: &[T; MAX_ANTECEDENT],
    d2: &mut [T; MAX_REGIMES],
) {
    let mut slots = d2.chunks_exact_mut(L);
    for block in pairs {
        // Regime `first + l` of the block is lane l of `distance` over the block from its
        // word `first` on (stride two words).
        for first in (0..2).step_by(L) {
            if let Some(out) = slots.next() {
                let lanes = block.get(first..).unwrap_or(&[]);
                out.copy_from_slice(&distance::<T, P, L>(lanes, x));
            }
        }
    }
}

/// Regimes whose distances [`distances_with`] computes in lockstep: two where the target has
/// two-lane `f64` vector registers (SSE2 on x86-64, NEON on AArch64), else one: a Cortex-M4F has
/// none, and pairing would only add code (about 7 KiB of flash).
const LANES: usize = if cfg!(any(target_arch = "x86_64", target_arch = "aarch64")) {
    2
} else {
    1
};

/// ‖F (x − c)‖² of `L` regimes in lockstep whose words lie two words apart in `words` (lane
/// `l`'s word `k` at word `2k + l`, as in a block of section F): c first, then F's rows
/// packed (NaN if too short).
#[inline(always)]
fn distance<T: Real, const P: usize, const L: usize>(
    words: &[T::Word],
    x: &[T; MAX_ANTECEDENT],
) -> [T; L] {
    if L == 1 {
        return [distance_one::<T, P>(words, x); L];
    }
    let mut total = [T::NAN; L];
    let Some(geometry) = words.get(..2 * (P + P * (P + 1) / 2 - 1) + L) else {
        return total;
    };
    let word = |lane: usize, k: usize| geometry.get(2 * k + lane).map_or(T::NAN, |w| w.get());
    let mut diff = [[T::ZERO; L]; P];
    for a in 0..P {
        for lane in 0..L {
            diff[a][lane] = x[a] - word(lane, a);
        }
    }
    // Sums start from their first term, not from zero: `0.0 + x` is not `x` (for x = −0.0), so
    // the compiler would keep every such addition.
    let mut at = P;
    for row in 0..P {
        let mut y = [T::ZERO; L];
        for lane in 0..L {
            y[lane] = word(lane, at) * diff[0][lane];
        }
        // `1..row + 1`, not `1..=row`: inclusive ranges defeat unrolling.
        for k in 1..row + 1 {
            for lane in 0..L {
                y[lane] = y[lane] + word(lane, at + k) * diff[k][lane];
            }
        }
        for lane in 0..L {
            total[lane] = if row == 0 {
                y[lane] * y[lane]
            } else {
                total[lane] + y[lane] * y[lane]
            };
        }
        at += row + 1;
    }
    total
}

/// [`distance`] for one regime (a Cortex-M4F's kernels): its words are the first of each pair
/// of `words`. Written over slices of known length, so that where the loops stay rolled (at
/// opt-level "s") no word read needs a bounds check, and with no array to clear per regime.
#[inline(always)]
fn distance_one<T: Real, const P: usize>(words: &[T::Word], x: &[T; MAX_ANTECEDENT]) -> T {
    let Some(geometry) = words.get(..2 * (P + P * (P + 1) / 2)) else {
        return T::NAN;
    };
    let (pairs, _) = geometry.as_chunks::<2>();
    let (center, mut rows) = pairs.split_at(P.min(pairs.len()));
    let diff: [T; P] =
        core::array::from_fn(|a| center.get(a).map_or(T::NAN, |w| x[a] - w[0].get()));
    let mut total = T::ZERO;
    for row in 0..P {
        let (factor, rest) = rows.split_at((row + 1).min(rows.len()));
        rows = rest;
        // Sums start from their first term (see `distance`).
        let mut terms = factor.iter().zip(&diff).map(|(w, d)| w[0].get() * *d);
        let first = terms.next().unwrap_or(T::NAN);
        let y = terms.fold(first, |y, t| y + t);
        total = if row == 0 { y * y } else { total + y * y };
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

/// The first `N` words of a record of section C as `T` (all NaN if the record is shorter).
#[inline(always)]
fn words<T: Real, const N: usize>(record: &[T::Word]) -> [T; N] {
    let mut out = [T::NAN; N];
    if let Some(words) = record.get(..N) {
        for (o, w) in out.iter_mut().zip(words) {
            *o = w.get();
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

#[cfg(test)]
mod tests {
    use super::*;
    use std::vec::Vec;

    /// `c` regimes of `p` variables with `tail` coefficients: each regime's words in order
    /// (center, the factor's rows packed, η, offset, coefficients), and section F's bytes
    /// (pairs interleaved, an odd count padded with a zero regime). Returns (words per regime,
    /// section, words per regime count).
    fn regimes(c: usize, p: usize, tail: usize) -> (Vec<Vec<f64>>, Vec<u8>, usize) {
        let len = p + p * (p + 1) / 2 + 2 + tail;
        // Irregular values so that a mixed-up lane or word shows.
        let words: Vec<Vec<f64>> = (0..c)
            .map(|i| {
                (0..len)
                    .map(|k| ((i * 31 + k * 17) % 23) as f64 / 7.0 - 1.3)
                    .collect()
            })
            .collect();
        let mut section = Vec::new();
        let padding = vec![0.0; len];
        for pair in words.chunks(2) {
            let second = pair.get(1).unwrap_or(&padding);
            for k in 0..len {
                for regime in [&pair[0], second] {
                    section.extend_from_slice(&regime[k].to_le_bytes());
                }
            }
        }
        (words, section, len)
    }

    /// ‖F (x − c)‖² written as the definition reads, in the kernel's order of operations.
    fn by_definition(w: &[f64], p: usize, x: &[f64]) -> f64 {
        let diff: Vec<f64> = (0..p).map(|a| x[a] - w[a]).collect();
        let mut total = 0.0;
        let mut at = p;
        for row in 0..p {
            let mut y = w[at] * diff[0];
            for k in 1..=row {
                y += w[at + k] * diff[k];
            }
            total = if row == 0 { y * y } else { total + y * y };
            at += row + 1;
        }
        total
    }

    #[test]
    fn distances_match_the_definition_for_every_regime_count() {
        let x = [
            0.4, -1.1, 2.2, 0.05, -0.7, 1.9, 0.0, 0.3, -0.2, 1.0, -2.0, 0.6,
        ];
        // One lane is what a Cortex-M4F runs, two what x86-64 and AArch64 run.
        let kernels: [DistanceKernel<f64>; 2] =
            [distances_with::<f64, 6, 1>, distances_with::<f64, 6, 2>];
        for (lanes, kernel) in kernels.into_iter().enumerate() {
            for c in 1..=MAX_REGIMES {
                let (words, section, len) = regimes(c, 6, 3);
                let mut d2 = [f64::NAN; MAX_REGIMES];
                kernel(
                    section.as_chunks::<8>().0.chunks_exact(2 * len),
                    &x,
                    &mut d2,
                );
                for (i, w) in words.iter().enumerate() {
                    // Exact: the lockstep lanes do the same operations in the same order.
                    let expected = by_definition(w, 6, &x);
                    assert_eq!(d2[i], expected, "{} lanes, c = {c}, regime {i}", lanes + 1);
                }
                // An odd count's padding regime fills one more slot, never more.
                assert!(
                    d2[c.next_multiple_of(2)..].iter().all(|d| d.is_nan()),
                    "c = {c}: wrote past the regimes"
                );
            }
        }
    }

    #[test]
    fn a_short_block_gives_nan_distances() {
        let (_, section, _) = regimes(3, 3, 0);
        // Blocks of 32 bytes cannot hold two regimes' 3 center values and 6 factor entries.
        let kernels: [DistanceKernel<f64>; 2] =
            [distances_with::<f64, 3, 1>, distances_with::<f64, 3, 2>];
        for kernel in kernels {
            let mut d2 = [0.0f64; MAX_REGIMES];
            kernel(
                section[..48].as_chunks::<8>().0.chunks_exact(4),
                &[0.0; MAX_ANTECEDENT],
                &mut d2,
            );
            assert!(d2[..2].iter().all(|d| d.is_nan()), "{d2:?}");
        }
    }

    #[test]
    fn the_pass_keeps_the_smallest_distance_over_scale_and_skips_nan_and_padding() {
        let (p, nr) = (2, 3);
        let geometry = p + p * (p + 1) / 2;
        let values = [0.5, -1.0, 2.0];
        for c in 1..=5 {
            let (words, mut section, len) = regimes(c, p, nr);
            let eta_at = |regime: usize| 16 * len * (regime / 2) + 8 * (2 * geometry + regime % 2);
            // η of 1, 2, 3, …; the padding regime of an odd count gets η = 1 and d² = 1e-3, so
            // it would win were it taken.
            for i in 0..c.next_multiple_of(2) {
                let eta = if i < c { (i + 1) as f64 } else { 1.0 };
                section[eta_at(i)..eta_at(i) + 8].copy_from_slice(&eta.to_le_bytes());
            }
            let d2_of = |i: usize| {
                if i < c {
                    0.5 + ((i * 7) % 5) as f64
                } else {
                    1e-3
                }
            };
            let mut d2: [f64; MAX_REGIMES] = core::array::from_fn(d2_of);
            let mut local = [f64::NAN; MAX_REGIMES];
            let pass = regime_pass(
                section.as_chunks::<8>().0.chunks_exact(2 * len),
                p,
                c,
                &values,
                &mut d2,
                &mut local,
            );
            let best = (0..c)
                .map(|i| d2_of(i) / (i + 1) as f64)
                .fold(f64::INFINITY, f64::min);
            assert_eq!(pass.best_ratio, best, "c = {c}");
            let nearest = (0..c).map(d2_of).fold(f64::INFINITY, f64::min);
            assert_eq!(pass.dmin, nearest, "c = {c}");
            assert_eq!(words.len(), c);

            // A NaN η (a damaged block) is never the best, not even as the last regime; the
            // others still count.
            if c >= 2 {
                let last = c - 1;
                section[eta_at(last)..eta_at(last) + 8].copy_from_slice(&f64::NAN.to_le_bytes());
                let mut d2: [f64; MAX_REGIMES] = core::array::from_fn(d2_of);
                let pass = regime_pass(
                    section.as_chunks::<8>().0.chunks_exact(2 * len),
                    p,
                    c,
                    &values,
                    &mut d2,
                    &mut local,
                );
                let best = (0..last)
                    .map(|i| d2_of(i) / (i + 1) as f64)
                    .fold(f64::INFINITY, f64::min);
                assert_eq!(pass.best_ratio, best, "c = {c}, NaN η");
            }
        }
    }

    #[test]
    fn consequents_match_the_definition_for_paired_and_single_regimes() {
        let p = 2;
        for nr in [0, 1, 3, 4, 5, 8, 12] {
            let values: Vec<f64> = (0..nr).map(|k| 0.7 * k as f64 - 1.9).collect();
            for c in 1..=5 {
                let (words, section, len) = regimes(c, p, nr);
                let mut d2 = [1.0f64; MAX_REGIMES];
                let mut local = [f64::NAN; MAX_REGIMES];
                let pass = regime_pass(
                    section.as_chunks::<8>().0.chunks_exact(2 * len),
                    p,
                    c,
                    &values,
                    &mut d2,
                    &mut local,
                );
                let mut blend = 0.0;
                for (i, w) in words.iter().enumerate() {
                    // offset + Σ θ_k v_k with value k in partial sum k mod 4, then
                    // (s0 + s1) + (s2 + s3): the order `consequents` promises.
                    let theta = &w[p + p * (p + 1) / 2 + 2..];
                    let mut s = [0.0f64; 4];
                    for (k, (t, v)) in theta.iter().zip(&values).enumerate() {
                        s[k % 4] += t * v;
                    }
                    let offset = w[p + p * (p + 1) / 2 + 1];
                    let expected = offset + ((s[0] + s[1]) + (s[2] + s[3]));
                    assert_eq!(local[i], expected, "nr = {nr}, c = {c}, regime {i}");
                    blend += expected; // d² = 1: every reciprocal is 1
                }
                assert_eq!(pass.inverse_sum, c as f64);
                assert!((pass.inverse_blend - blend).abs() <= 1e-12 * blend.abs().max(1.0));
                assert!(local[c..].iter().all(|l| l.is_nan()), "c = {c}: wrote past");
            }
        }
    }
}

/// The copy of `step` compiled for AVX against the baseline copy, on the same models and inputs.
#[cfg(all(test, target_arch = "x86_64"))]
mod wide_tests {
    use super::*;
    use regimix_format::encode::{InputSpec, ModelSpec, RegimeSpec};
    use regimix_format::{InputSettings, TargetSettings};
    use std::format;
    use std::vec::Vec;

    /// A model of `c` regimes over `p` of `n` inputs, with input lags up to 3 and, if
    /// `feedback`, two output lags; irregular parameters so that a mixed-up word shows.
    fn model(n: usize, p: usize, c: usize, fuzziness: f64, feedback: bool) -> Vec<u8> {
        let wobble = |k: usize| ((k * 37 + 11) % 29) as f64 / 29.0 - 0.5;
        let mut regressors: Vec<Regressor> = (0..2 * n)
            .map(|k| Regressor {
                source: Source::Input((k % n) as u8),
                lag: (k / n * 3 + k % 2) as u16,
            })
            .collect();
        if feedback {
            regressors.extend((1..=2).map(|lag| Regressor {
                source: Source::Output,
                lag,
            }));
        }
        let nr = regressors.len();
        ModelSpec {
            builder_version: "wide test".into(),
            target_tag: "Y".into(),
            target_unit: "%".into(),
            sample_time: 60.0,
            transform: Transform::Log,
            target: TargetSettings {
                full_scale: 1.0,
                low: 1e-6,
                high: 100.0,
                fuzziness,
                domain_threshold: 0.05,
                residual_sd: 0.1,
                bias_gain: 0.3,
                bias_limit: 1.0,
                outlier_k: 3.0,
            },
            hold_limit: 3,
            lab_window: 10,
            inputs: (0..n)
                .map(|j| InputSpec {
                    tag: format!("T{j}"),
                    unit: "degC".into(),
                    settings: InputSettings {
                        low: 0.0,
                        high: 200.0,
                        mean: 100.0 + j as f64,
                        std: 10.0 + wobble(j),
                    },
                })
                .collect(),
            regressors,
            antecedent: (0..p as u16).collect(),
            regimes: (0..c)
                .map(|i| RegimeSpec {
                    center: (0..p).map(|a| 2.0 * wobble(i * 13 + a)).collect(),
                    factor: (0..p)
                        .flat_map(|r| {
                            (0..=r).map(move |k| {
                                if r == k {
                                    1.0 + wobble(i + r)
                                } else {
                                    0.2 * wobble(i * 7 + r * 3 + k)
                                }
                            })
                        })
                        .collect(),
                    eta: 1.0 + wobble(i * 5).abs(),
                    offset: 0.3 * wobble(i * 3),
                    coefficients: (0..nr)
                        .map(|k| 0.02 * wobble(i * 11 + k) / (1.0 + k as f64))
                        .collect(),
                })
                .collect(),
        }
        .to_bytes()
        .expect("encode")
    }

    /// Runs both copies side by side over `steps` samples and asserts identical bits.
    fn same_bits<T: Real>(bytes: &[u8], steps: usize) {
        let view = ModelView::parse(bytes).expect("valid");
        let words = state_words_for::<T>(&view);
        let (mut a, mut b) = (std::vec![T::ZERO; words], std::vec![T::ZERO; words]);
        let mut wide = Estimator::new(view, &mut a).expect("state");
        let mut narrow = Estimator::new(view, &mut b).expect("state");
        wide.hot.wide = true;
        narrow.hot.wide = false;
        let n = view.n_inputs();
        let mut seed = 0x2545_f491_4f6c_dd1du64;
        for k in 0..steps {
            let inputs: Vec<T> = (0..n)
                .map(|j| {
                    seed ^= seed << 13;
                    seed ^= seed >> 7;
                    seed ^= seed << 17;
                    let r = (seed >> 11) as f64 / (1u64 << 53) as f64;
                    // Mostly near the means, sometimes far out or invalid.
                    let x = match seed % 50 {
                        0 => f64::NAN,
                        1 => 500.0,
                        2 => 100.0 + 80.0 * (r - 0.5),
                        _ => 100.0 + j as f64 + 25.0 * (r - 0.5) + 10.0 * (k as f64 * 0.05).sin(),
                    };
                    T::from_f64(x)
                })
                .collect();
            let (x, y) = (wide.step(&inputs), narrow.step(&inputs));
            let bits = |e: &Estimate<T>| {
                (
                    e.value.to_f64().to_bits(),
                    e.model_value.to_f64().to_bits(),
                    e.typicality.to_f64().to_bits(),
                    e.status,
                    e.dominant,
                )
            };
            assert_eq!(bits(&x), bits(&y), "sample {k}");
            let weights = |e: &Estimator<T>| -> Vec<u64> {
                e.weights().iter().map(|w| w.to_f64().to_bits()).collect()
            };
            assert_eq!(weights(&wide), weights(&narrow), "sample {k}");
        }
    }

    #[test]
    fn the_avx_copy_gives_the_baseline_bits() {
        if !crate::wide::avx() {
            std::eprintln!("no AVX on this processor: only the baseline copy runs here");
            return;
        }
        for (n, p, c, fuzziness, feedback) in [
            (6, 6, 6, 2.0, false),
            (6, 6, 5, 2.0, true),
            (3, 1, 1, 2.0, true),
            (4, 3, 2, 1.6, false),
            (12, 12, 16, 2.0, true),
            (9, 7, 3, 2.5, true),
        ] {
            let bytes = model(n, p, c, fuzziness, feedback);
            same_bits::<f64>(&bytes, 3000);
            same_bits::<f32>(&bytes, 3000);
        }
    }
}
