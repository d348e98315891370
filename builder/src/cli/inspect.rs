//! `regimix inspect MODEL [--json]`.

use std::path::Path;

use anyhow::Context;
use regimix_builder::analysis::{regime_dynamics, shape_note, RegimeDynamics};
use regimix_builder::prepare::audit::tag_column_width;
use regimix_format::transform::Transform;
use regimix_format::{ModelView, Source};
use serde::Serialize;

#[derive(Serialize)]
struct InputInfo {
    tag: String,
    unit: String,
    low: f64,
    high: f64,
    mean: f64,
    std: f64,
}

#[derive(Serialize)]
struct Summary {
    model_id: String,
    format_version: u16,
    builder_version: String,
    target: String,
    target_unit: String,
    transform: String,
    sample_time_s: f64,
    simulation_mode: bool,
    inputs: Vec<InputInfo>,
    regressors: Vec<String>,
    antecedent: Vec<String>,
    hold_limit_samples: u16,
    lab_window_samples: u16,
    fuzziness: f64,
    domain_threshold: f64,
    residual_sd: f64,
    bias_gain: f64,
    bias_limit: f64,
    outlier_k: f64,
    estimate_range: (f64, f64),
    state_words: usize,
    /// An f32 estimator's words: it also keeps the parameters converted to f32.
    state_words_f32: usize,
    regimes: Vec<RegimeDynamics>,
}

fn summary(m: &ModelView<'_>) -> Summary {
    let t = m.target();
    Summary {
        model_id: format!("{:016x}", m.model_id()),
        format_version: m.format_version(),
        builder_version: m.builder_version().into(),
        target: m.target_tag().into(),
        target_unit: m.target_unit().into(),
        transform: match m.transform() {
            Transform::Identity => "none".into(),
            Transform::Log => "log".into(),
            Transform::Logit { full_scale } => format!("logit (full scale {full_scale})"),
        },
        sample_time_s: m.sample_time(),
        simulation_mode: m.uses_output_lags(),
        inputs: (0..m.n_inputs())
            .filter_map(|j| {
                m.input(j).map(|s| InputInfo {
                    tag: m.input_tag(j).into(),
                    unit: m.input_unit(j).into(),
                    low: s.low,
                    high: s.high,
                    mean: s.mean,
                    std: s.std,
                })
            })
            .collect(),
        regressors: (0..m.n_regressors())
            .filter_map(|r| m.regressor(r))
            .map(|g| match g.source {
                Source::Input(j) => format!("{}(k-{})", m.input_tag(j as usize), g.lag),
                Source::Output => format!("{}(k-{})", m.target_tag(), g.lag),
            })
            .collect(),
        antecedent: (0..m.n_antecedent())
            .map(|a| m.input_tag(m.antecedent_input(a)).to_string())
            .collect(),
        hold_limit_samples: m.hold_limit(),
        lab_window_samples: m.lab_window(),
        fuzziness: t.fuzziness,
        domain_threshold: t.domain_threshold,
        residual_sd: t.residual_sd,
        bias_gain: t.bias_gain,
        bias_limit: t.bias_limit,
        outlier_k: t.outlier_k,
        estimate_range: (t.low, t.high),
        state_words: regimix_runtime::state_words(m),
        state_words_f32: regimix_runtime::state_words_for::<f32>(m),
        regimes: regime_dynamics(m),
    }
}

/// `v` to four significant digits, trailing zeros dropped (the text view; JSON keeps every digit).
fn sig(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return format!("{v}");
    }
    let decimals = (3 - v.abs().log10().floor() as i32).clamp(0, 17) as usize;
    let text = format!("{v:.decimals$}");
    if text.contains('.') {
        text.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        text
    }
}

fn seconds(v: Option<f64>) -> String {
    match v {
        Some(s) if s >= 120.0 => format!("{:.1} min", s / 60.0),
        Some(s) => format!("{s:.0} s"),
        None => "—".into(),
    }
}

/// Prints what a model file holds.
pub fn run(path: &Path, json: bool) -> anyhow::Result<()> {
    let bytes =
        std::fs::read(path).with_context(|| format!("cannot read model {}", path.display()))?;
    let model = ModelView::parse(&bytes).with_context(|| format!("{}", path.display()))?;
    let s = summary(&model);
    if json {
        return super::print_out(&(serde_json::to_string_pretty(&s)? + "\n"));
    }
    let mut out = String::new();
    macro_rules! println {
        ($($arg:tt)*) => {{
            use std::fmt::Write as _;
            let _ = writeln!(out, $($arg)*);
        }};
    }
    println!(
        "Model {} (format {}, builder {})",
        s.model_id, s.format_version, s.builder_version
    );
    println!(
        "  estimates {}{}, transform {}, every {} s, {}",
        s.target,
        regimix_builder::report::unit_suffix(&s.target_unit),
        s.transform,
        s.sample_time_s,
        if s.simulation_mode {
            "simulation mode (own past outputs)"
        } else {
            "no output lags"
        }
    );
    println!("  regressors: {}", s.regressors.join(", "));
    println!(
        "  estimates clipped to {} … {} {}",
        sig(s.estimate_range.0),
        sig(s.estimate_range.1),
        s.target_unit
    );
    println!(
        "  regimes scheduled on: {} (fuzziness {})",
        s.antecedent.join(", "),
        sig(s.fuzziness)
    );
    println!(
        "  invalid inputs held {} samples; lab results up to {} samples old; bias gain {}, limit ±{}, outliers beyond {} × {} ({})",
        s.hold_limit_samples,
        s.lab_window_samples,
        sig(s.bias_gain),
        sig(s.bias_limit),
        sig(s.outlier_k),
        sig(s.residual_sd),
        match model.transform() {
            Transform::Identity => "bias and residuals in engineering units",
            Transform::Log => "bias and residuals in the log domain",
            Transform::Logit { .. } => "bias and residuals in the logit domain",
        }
    );
    println!(
        "  out of trained domain below typicality {}",
        sig(s.domain_threshold)
    );
    println!(
        "  runtime state: {} words ({} bytes) in f64; {} words ({} bytes) in f32, with the parameters converted once",
        s.state_words,
        8 * s.state_words,
        s.state_words_f32,
        4 * s.state_words_f32
    );
    let w = tag_column_width(s.inputs.iter().map(|i| i.tag.as_str()));
    println!("\nInputs");
    for i in &s.inputs {
        println!(
            "  {:<w$} [{}]  valid {} … {}, training mean {:.4} sd {:.4}",
            i.tag, i.unit, i.low, i.high, i.mean, i.std
        );
    }
    for r in &s.regimes {
        println!(
            "\nRegime {} — target {:.4} {} at:",
            r.regime + 1,
            r.target,
            s.target_unit
        );
        let point: Vec<String> = r
            .operating_point
            .iter()
            .map(|(t, v)| format!("{t} {v:.4}"))
            .collect();
        println!("  {}", point.join(", "));
        let slowest = r.pole_time_constant.map_or(String::new(), |t| {
            format!("; slowest pole: time constant {}", seconds(Some(t)))
        });
        println!(
            "  {}{slowest}",
            if r.stable {
                "stable"
            } else {
                "UNSTABLE: a pole lies on or outside the unit circle"
            }
        );
        for i in &r.inputs {
            if i.model_gain == 0.0 {
                continue;
            }
            println!(
                "  {:<w$} gain {:>12.5} {} per {}  dead time {:>9}  time constant {:>9}",
                i.tag,
                i.gain,
                s.target_unit,
                s.inputs
                    .iter()
                    .find(|x| x.tag == i.tag)
                    .map_or("", |x| x.unit.as_str()),
                seconds(i.dead_time),
                seconds(i.time_constant)
            );
            if let Some(note) = shape_note(i) {
                println!("  {:<w$} step response {note}", "");
            }
        }
    }
    super::print_out(&out)
}

#[cfg(test)]
mod tests {
    use super::sig;

    #[test]
    fn four_significant_digits_without_trailing_zeros() {
        assert_eq!(sig(0.3335536133249638), "0.3336");
        assert_eq!(sig(0.06671072266499276), "0.06671");
        assert_eq!(sig(3.0), "3");
        assert_eq!(sig(100.0), "100");
        assert_eq!(sig(12345.6), "12346");
        assert_eq!(sig(1e-6), "0.000001");
        assert_eq!(sig(-2.5), "-2.5");
        assert_eq!(sig(0.0), "0");
    }
}
