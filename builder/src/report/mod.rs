//! `report.html`: one self-contained page (inline SVG, no network) a modeller can sign off.

mod plots;

use std::fmt::Write as _;

use crate::analysis::regime_dynamics;
use crate::build::Built;
use crate::config::Config;
use crate::export::{term_name, Summary};
use crate::identify::gains::gains;
use crate::prepare::CellStatus;
use crate::timestamp::Rfc3339;
use regimix_format::ModelView;
use regimix_runtime::Status;

fn esc(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
}

fn num(v: f64) -> String {
    if !v.is_finite() {
        "—".into()
    } else if v != 0.0 && (v.abs() >= 1e5 || v.abs() < 1e-3) {
        format!("{v:.3e}")
    } else {
        format!("{v:.4}")
    }
}

const STYLE: &str = "body{font-family:system-ui,sans-serif;max-width:1100px;margin:2em auto;color:#1d2a33;line-height:1.45}\
h1{font-size:1.6em}h2{border-bottom:2px solid #2a6f97;padding-bottom:.2em;margin-top:2em}\
table{border-collapse:collapse;margin:.6em 0}td,th{border:1px solid #c9d3da;padding:.25em .6em;text-align:right}\
th{background:#eef3f6}td:first-child,th:first-child{text-align:left}.caution{background:#fff4e5;border-left:4px solid #d9822b;padding:.6em 1em}\
figure{margin:1em 0}figcaption{font-size:.9em;color:#4a5a66}";

/// ` [unit]` after a name, or nothing when the unit is not given.
pub fn unit_suffix(unit: &str) -> String {
    if unit.is_empty() {
        String::new()
    } else {
        format!(" [{unit}]")
    }
}

/// The whole report.
pub fn report_html(b: &Built, config: &Config, s: &Summary) -> String {
    let ds = &b.prepared.dataset;
    let audit = &b.prepared.audit;
    let unit = &config.target.spec.unit;
    let target = &config.target.spec.tag;
    let mut h = String::new();
    let _ = write!(h, "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\"/><title>regimix report — {}</title><style>{STYLE}</style></head><body>", esc(target));
    let _ = write!(
        h,
        "<h1>Soft sensor for {}{}</h1><p>Model <code>{}</code>, builder {}, {} regimes, {} regressor{}, sample time {}. Test block from {} ({} samples).</p>",
        esc(target),
        esc(&unit_suffix(unit)),
        s.model_id,
        esc(&s.builder_version),
        s.regime_count,
        s.regressors.len(),
        if s.regressors.len() == 1 { "" } else { "s" },
        config.sample_time,
        s.test_start,
        s.test.samples
    );

    h.push_str("<h2 id=\"comparison\">Accuracy on the test block</h2><table><tr><th>model</th><th>RMSE</th><th>MAE</th><th>R²</th><th>bias</th></tr>");
    let _ = write!(
        h,
        "<tr><td>blended regimes</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>",
        num(s.test.rmse),
        num(s.test.mae),
        num(s.test.r2),
        num(s.test.bias)
    );
    let bl = &s.baseline.test;
    let _ = write!(h, "<tr><td>global linear (same regressors)</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr></table>", num(bl.rmse), num(bl.mae), num(bl.r2), num(bl.bias));
    let _ = write!(
        h,
        "<p>Errors in {}; estimates computed by the runtime from the model file. RMSE ratio blended / linear: <b>{:.2}</b>. Share of test samples outside the trained domain: {:.1} %.</p>",
        esc(unit),
        s.rmse_ratio,
        100.0 * s.test.out_of_domain_fraction
    );
    if !b.notes.is_empty() {
        h.push_str("<p>Notes from the build:</p><ul class=\"notes\">");
        for note in &b.notes {
            let _ = write!(h, "<li>{}</li>", esc(note));
        }
        h.push_str("</ul>");
    }

    // Measured vs estimated on the test block.
    let test_rows: Vec<usize> = (b.test_start..ds.grid.len).collect();
    let hours = |k: usize| (ds.time(k) - ds.time(b.test_start)) as f64 / 3.6e9;
    let est: Vec<(f64, f64)> = test_rows
        .iter()
        .filter(|&&k| b.estimates[k].value.is_finite())
        .map(|&k| (hours(k), b.estimates[k].value))
        .collect();
    let meas: Vec<(f64, f64)> = test_rows
        .iter()
        .filter(|&&k| ds.target_status[k] == CellStatus::Valid)
        .map(|&k| (hours(k), ds.target[k]))
        .collect();
    let base: Vec<(f64, f64)> = b
        .baseline_estimates
        .iter()
        .map(|&(k, v)| (hours(k), v))
        .collect();
    let lab = config.target.lab.is_some();
    h.push_str(&plots::figure(
        &plots::time_series(
            &[
                ("measured", &meas, lab),
                ("blended estimate", &est, false),
                ("global linear", &base, false),
            ],
            "hours into the test block",
            unit,
        ),
        &format!(
            "Measured and estimated {} on the test block{}.",
            esc(target),
            if lab { " (lab results as points)" } else { "" }
        ),
    ));
    // The scored samples: an analyzer's fresh readings, not its held repeats.
    let fresh = ds.fresh_target_model();
    let pairs: Vec<(f64, f64)> = test_rows
        .iter()
        .filter(|&&k| {
            ds.target_status[k] == CellStatus::Valid
                && fresh[k].is_finite()
                && b.estimates[k].value.is_finite()
        })
        .map(|&k| (ds.target[k], b.estimates[k].value))
        .collect();
    h.push_str(&plots::figure(
        &plots::parity(&pairs, unit),
        &format!(
            "Parity: estimate against measurement on the test block{}; the line is equality.",
            if ds.reading_cycle > 1 {
                " (fresh analyzer readings)"
            } else {
                ""
            }
        ),
    ));
    let residuals: Vec<f64> = pairs.iter().map(|(y, e)| e - y).collect();
    h.push_str(&plots::figure(
        &plots::histogram(&residuals, unit),
        "Residuals (estimate − measured) on the test block.",
    ));

    // Regimes.
    h.push_str("<h2 id=\"regimes\">Operating regimes</h2>");
    if !s.input_ranking.is_empty() {
        let ranked: Vec<String> = s
            .input_ranking
            .iter()
            .take(8)
            .map(|r| format!("{} {:.2}", esc(&r.tag), r.ratio))
            .collect();
        let _ = write!(
            h,
            "<p>Inputs ranked as scheduling variables (one linear model's validation RMSE with its structure fitted over three ranges of the input, over its own; below 1, its behaviour changes along that input): {}{}.</p>",
            ranked.join(", "),
            if s.input_ranking.len() > 8 { ", …" } else { "" }
        );
    }
    if b.validity.len() > 1 {
        h.push_str("<table><tr><th>regimes</th><th>fuzzy hypervolume</th><th>partition density</th><th>partition coefficient</th><th>partition entropy</th><th>Xie–Beni</th></tr>");
        for v in &b.validity {
            let _ = write!(
                h,
                "<tr><td>{}{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>",
                v.count,
                if v.count == s.regime_count {
                    " (chosen)"
                } else {
                    ""
                },
                num(v.fuzzy_hypervolume),
                num(v.partition_density),
                num(v.partition_coefficient),
                num(v.partition_entropy),
                num(v.xie_beni)
            );
        }
        h.push_str("</table><p>Rule: the smallest count whose fuzzy hypervolume is within 5 % of the smallest (docs/methods.md).</p>");
        let fhv: Vec<(f64, f64)> = b
            .validity
            .iter()
            .map(|v| (v.count as f64, v.fuzzy_hypervolume))
            .collect();
        h.push_str(&plots::figure(
            &plots::time_series(&[("fuzzy hypervolume", &fhv, true)], "regime count", "FHV"),
            "Fuzzy hypervolume against the regime count.",
        ));
    }
    let step = (ds.grid.len / 1500).max(1);
    let weight_series: Vec<Vec<(f64, f64)>> = (0..s.regime_count)
        .map(|i| {
            (0..ds.grid.len)
                .step_by(step)
                .filter_map(|k| {
                    b.estimates[k]
                        .weights
                        .get(i)
                        .filter(|w| w.is_finite())
                        .map(|w| ((ds.time(k) - ds.time(0)) as f64 / 8.64e10, *w))
                })
                .collect()
        })
        .collect();
    let names: Vec<String> = (1..=s.regime_count)
        .map(|i| format!("regime {i}"))
        .collect();
    let refs: Vec<plots::Series<'_>> = names
        .iter()
        .zip(&weight_series)
        .map(|(n, w)| (n.as_str(), w.as_slice(), false))
        .collect();
    h.push_str(&plots::figure(
        &plots::time_series(&refs, "days", "membership"),
        "Regime memberships over the whole period (the runtime's weights).",
    ));

    // Per-regime local models.
    if let Ok(view) = ModelView::parse(&b.bytes) {
        let dynamics = regime_dynamics(&view);
        let tags: Vec<String> = config.inputs.iter().map(|t| t.tag.clone()).collect();
        for (i, d) in dynamics.iter().enumerate() {
            let _ = write!(
                h,
                "<h3>Regime {} — {} {} at the operating point</h3><p>",
                i + 1,
                num(d.target),
                esc(unit)
            );
            let point: Vec<String> = d
                .operating_point
                .iter()
                .zip(&config.inputs)
                .map(|((t, v), spec)| format!("{} {} {}", esc(t), num(*v), esc(&spec.unit)))
                .collect();
            h.push_str(&point.join(", "));
            let _ = write!(
                h,
                ". {}{}</p>",
                if d.stable {
                    "Stable."
                } else {
                    "<b>Unstable</b>: a pole lies on or outside the unit circle."
                },
                d.pole_time_constant.map_or(String::new(), |t| format!(
                    " Slowest pole: time constant {:.1} min.",
                    t / 60.0
                ))
            );
            let dof = (b.training_rows as f64 / s.regime_count as f64 - (b.terms.len() + 1) as f64)
                .max(1.0);
            let g = gains(&b.terms, &b.fits[i], dof);
            h.push_str("<table><tr><th>input</th><th>gain</th><th>95 % interval</th><th>dead time</th><th>time constant</th><th>step response</th></tr>");
            for r in &d.inputs {
                let Some(j) = tags.iter().position(|t| t == &r.tag) else {
                    continue;
                };
                let Some(gi) = g.iter().find(|x| x.input == j) else {
                    continue;
                };
                let slope = if r.model_gain != 0.0 {
                    r.gain / r.model_gain
                } else {
                    1.0
                };
                let fmt_t = |v: Option<f64>| {
                    v.map_or("—".to_string(), |x| format!("{:.1} min", x / 60.0))
                };
                let _ = write!(
                    h,
                    "<tr><td>{}</td><td>{} {}/{}</td><td>{} … {}</td><td>{}</td><td>{}</td><td>{}</td></tr>",
                    esc(&r.tag),
                    num(r.gain),
                    esc(unit),
                    esc(&config.inputs[j].unit),
                    num(gi.low * slope),
                    num(gi.high * slope),
                    fmt_t(r.dead_time),
                    fmt_t(r.time_constant),
                    crate::analysis::shape_note(r).unwrap_or_else(|| "—".into())
                );
            }
            h.push_str("</table>");
        }
        h.push_str("<p>Gains are local derivatives at each regime's operating point, through the target transform; intervals from the parameter covariance (delta method, t-distribution). Dead time and time constant are read off each regime's simulated unit-step response (2 % and 63.2 % of the final value); where that response overshoots or first moves the other way, the table says by how much, and the slowest pole's time constant is the better guide to how fast the regime settles.</p>");
        // How each gain changes with the operating level: the check a modeller makes against the
        // process physics (e.g. a temperature-to-impurity gain growing with the impurity level).
        let mut order: Vec<usize> = (0..dynamics.len()).collect();
        order.sort_by(|&a, &b| dynamics[a].target.total_cmp(&dynamics[b].target));
        let _ = write!(h, "<h3 id=\"gains-across\">Gains across regimes, by {} level</h3><table><tr><th>input</th>", esc(target));
        for &i in &order {
            let _ = write!(
                h,
                "<th>regime {} ({} {})</th>",
                i + 1,
                num(dynamics[i].target),
                esc(unit)
            );
        }
        h.push_str("<th>largest / smallest |gain|</th></tr>");
        for (j, tag) in tags.iter().enumerate() {
            let g: Vec<f64> = order
                .iter()
                .map(|&i| dynamics[i].inputs.get(j).map_or(0.0, |r| r.gain))
                .collect();
            if g.iter().all(|v| *v == 0.0) {
                continue;
            }
            let _ = write!(h, "<tr><td>{}</td>", esc(tag));
            for v in &g {
                let _ = write!(h, "<td>{}</td>", num(*v));
            }
            let mags: Vec<f64> = g.iter().map(|v| v.abs()).filter(|v| *v > 0.0).collect();
            let spread = mags.iter().copied().fold(0.0, f64::max)
                / mags.iter().copied().fold(f64::INFINITY, f64::min);
            let _ = write!(h, "<td>{:.1}×</td></tr>", spread);
        }
        h.push_str("</table><p>A soft sensor for a nonlinear plant earns its regimes when these gains differ; check that the direction and size of the change match the process (for an impurity, sensitivities usually grow with the impurity level).</p>");
    }

    let _ = write!(
        h,
        "<h2 id=\"structure\">Selected structure</h2><p>Estimation: {}{}. Regressors: ",
        match config.modelling.estimation {
            crate::config::Estimation::Local => "weighted least squares per regime",
            crate::config::Estimation::Global => "global least squares over all regimes",
        },
        if b.refined {
            ", refined on the free-run simulation error"
        } else {
            ""
        }
    );
    h.push_str(
        &b.terms
            .iter()
            .map(|t| {
                esc(&term_name(
                    *t,
                    &config
                        .inputs
                        .iter()
                        .map(|i| i.tag.clone())
                        .collect::<Vec<_>>(),
                    target,
                ))
            })
            .collect::<Vec<_>>()
            .join(", "),
    );
    h.push_str("</p><table><tr><th>step</th><th>regressor</th><th>validation RMSE (model domain)</th></tr>");
    let tags: Vec<String> = config.inputs.iter().map(|i| i.tag.clone()).collect();
    for (n, st) in b.path.iter().enumerate() {
        let _ = write!(
            h,
            "<tr><td>{} {}</td><td>{}</td><td>{}</td></tr>",
            n + 1,
            if st.action == '+' { "add" } else { "drop" },
            esc(&term_name(st.term, &tags, target)),
            num(st.validation_rmse)
        );
    }
    h.push_str("</table>");

    // Out-of-domain periods.
    h.push_str("<h2 id=\"domain\">Out-of-domain periods</h2>");
    let mut periods = Vec::new();
    let mut k = 0;
    while k < b.estimates.len() {
        if b.estimates[k].status & Status::OUT_OF_DOMAIN != 0 {
            let start = k;
            while k < b.estimates.len() && b.estimates[k].status & Status::OUT_OF_DOMAIN != 0 {
                k += 1;
            }
            periods.push((start, k - start));
        } else {
            k += 1;
        }
    }
    periods.sort_by_key(|p| std::cmp::Reverse(p.1));
    if periods.is_empty() {
        h.push_str("<p>None.</p>");
    } else {
        let _ = write!(
            h,
            "<p>{} periods; the longest:</p><table><tr><th>from</th><th>samples</th></tr>",
            periods.len()
        );
        for (start, len) in periods.iter().take(10) {
            let _ = write!(
                h,
                "<tr><td>{}</td><td>{}</td></tr>",
                Rfc3339(ds.time(*start)),
                len
            );
        }
        h.push_str("</table>");
    }

    // Data audit.
    h.push_str("<h2 id=\"data\">Data audit</h2>");
    let _ = write!(h, "<p>{} → {}, {} samples every {}, {} duplicated rows collapsed, {} usable target samples{}.</p>", audit.first, audit.last, audit.grid_samples, audit.sample_time, audit.duplicate_rows, audit.target.usable_samples,
        match &audit.target.update_every {
            Some(every) => format!(" (the analyzer gives a new reading every {}, held in between)", esc(every)),
            None => String::new(),
        });
    h.push_str("<table><tr><th>tag</th><th>role</th><th>valid %</th><th>markers</th><th>frozen samples</th><th>spikes</th><th>min</th><th>mean</th><th>max</th><th>unit</th></tr>");
    for t in &audit.tags {
        let _ = write!(
            h,
            "<tr><td>{}</td><td>{}</td><td>{:.1}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>",
            esc(&t.tag),
            t.role,
            t.valid_percent,
            t.markers.values().sum::<u64>(),
            t.frozen.iter().map(|p| p.samples).sum::<usize>(),
            t.spikes,
            num(t.min.unwrap_or(f64::NAN)),
            num(t.mean.unwrap_or(f64::NAN)),
            num(t.max.unwrap_or(f64::NAN)),
            esc(&t.unit)
        );
    }
    h.push_str("</table><ul>");
    for w in &audit.warnings {
        let _ = write!(h, "<li>{}</li>", esc(w));
    }
    h.push_str("</ul>");

    h.push_str("<h2 id=\"cautions\">Cautions</h2><div class=\"caution\"><p>This estimator is not a safety instrument. Validate it against lab data before use and keep doing so; do not use it alone for protective functions; watch the out-of-domain and input-status flags and treat flagged estimates as uncertain; follow your site's management-of-change procedures and local codes.</p></div>");
    h.push_str("</body></html>\n");
    h
}
