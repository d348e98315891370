//! The demo plant: C-301, an invented benzene–toluene splitter.
//!
//! A binary distillation column (20 trays, total condenser, reboiler) with constant relative
//! volatility and constant molar overflow, simulated from first principles. Operators move the
//! feed rate, the reflux and the distillate draw through normal, high-purity and loose operation;
//! the feed composition drifts unmeasured. The quality variable is the toluene impurity of the
//! distillate (mol %), which spans two decades, so its sensitivity to the tray temperatures
//! changes by an order of magnitude between regimes.
//!
//! Historian-like defects are added on purpose: noise and quantization, a historian outage,
//! quality markers, a frozen transmitter, spikes, an overlap of two exports with duplicated rows,
//! an analyzer with dead time and a hold between cycles, and lab results stamped at result time.
//!
//! Everything is deterministic from [`SEED`].

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

/// Seed of every random choice in the demo data.
pub const SEED: u64 = 20_260_302;
/// Days simulated.
pub const DAYS: usize = 21;
/// First timestamp: 2026-03-02T00:00:00Z in epoch seconds.
pub const START_EPOCH: i64 = 1_772_409_600;

const STAGES: usize = 22; // 0 reboiler, 1..=20 trays, 21 condenser
const FEED_STAGE: usize = 10;
const ALPHA: f64 = 2.4; // relative volatility benzene/toluene near 1 atm (from memory; textbook value)
const TRAY_HOLDUP: f64 = 0.25; // kmol
const DRUM_HOLDUP: f64 = 1.5; // kmol
const SUMP_HOLDUP: f64 = 1.5; // kmol
const SUBSTEPS: usize = 40; // Euler steps per minute (1.5 s each; stable for these holdups)

/// Antoine constants, log10(P/mmHg) = A − B/(C + T/°C). Benzene and toluene values as quoted in
/// Lange's Handbook of Chemistry (from memory).
const BENZENE: (f64, f64, f64) = (6.905_65, 1_211.033, 220.790);
const TOLUENE: (f64, f64, f64) = (6.954_64, 1_344.800, 219.482);

fn psat_mmhg((a, b, c): (f64, f64, f64), t: f64) -> f64 {
    10f64.powf(a - b / (c + t))
}

/// Bubble-point temperature (°C) of a benzene mole fraction `x` at `p_kpa` (Newton on Raoult's law).
pub fn bubble_point(x: f64, p_kpa: f64) -> f64 {
    let p = p_kpa * 760.0 / 101.325;
    let mut t = 80.0 + 30.0 * (1.0 - x);
    for _ in 0..30 {
        let f = x * psat_mmhg(BENZENE, t) + (1.0 - x) * psat_mmhg(TOLUENE, t) - p;
        let h = 1e-4;
        let f2 = x * psat_mmhg(BENZENE, t + h) + (1.0 - x) * psat_mmhg(TOLUENE, t + h) - p;
        let step = f * h / (f2 - f);
        t -= step;
        if step.abs() < 1e-9 {
            break;
        }
    }
    t
}

fn equilibrium(x: f64) -> f64 {
    ALPHA * x / (1.0 + (ALPHA - 1.0) * x)
}

/// Column state: liquid benzene fractions per stage.
struct Column {
    x: [f64; STAGES],
}

/// Flows in kmol/min and the feed fraction.
#[derive(Clone, Copy)]
struct Moves {
    feed: f64,
    reflux: f64,
    boilup: f64,
    z_feed: f64,
}

impl Column {
    fn step(&mut self, m: Moves, dt: f64) {
        let x = self.x;
        let y: Vec<f64> = x.iter().map(|&v| equilibrium(v)).collect();
        let v = m.boilup;
        let l_top = m.reflux;
        let l_bottom = m.reflux + m.feed;
        let distillate = (v - l_top).max(0.0);
        let bottoms = (l_bottom - v).max(0.0);
        let mut dx = [0.0; STAGES];
        dx[0] = (l_bottom * x[1] - v * y[0] - bottoms * x[0]) / SUMP_HOLDUP;
        for i in 1..STAGES - 1 {
            let l_out = if i <= FEED_STAGE { l_bottom } else { l_top };
            let l_in = if i < FEED_STAGE { l_bottom } else { l_top };
            let mut acc = l_in * x[i + 1] + v * y[i - 1] - l_out * x[i] - v * y[i];
            if i == FEED_STAGE {
                acc += m.feed * m.z_feed;
            }
            dx[i] = acc / TRAY_HOLDUP;
        }
        let top = STAGES - 1;
        dx[top] = (v * y[top - 1] - (l_top + distillate) * x[top]) / DRUM_HOLDUP;
        for i in 0..STAGES {
            self.x[i] = (x[i] + dt * dx[i]).clamp(1e-9, 1.0 - 1e-9);
        }
    }
}

/// Gaussian noise by the Box–Muller transform (kept here so the files do not depend on the
/// algorithm of a distribution crate).
fn gauss(rng: &mut ChaCha8Rng) -> f64 {
    let u1: f64 = rng.gen_range(f64::EPSILON..1.0);
    let u2: f64 = rng.gen();
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

fn quantize(v: f64, q: f64) -> f64 {
    (v / q).round() * q
}

/// One simulated minute of true values.
struct Truth {
    feed: f64,
    reflux: f64,
    steam: f64,
    pressure: f64,
    temps: [f64; 5],
    impurity: f64,
}

/// Trays whose temperatures are logged (numbered from the bottom).
pub const TEMPERATURE_TRAYS: [usize; 5] = [4, 8, 12, 15, 18];
/// Temperature tag names, in the order of [`TEMPERATURE_TRAYS`].
pub const TEMPERATURE_TAGS: [&str; 5] = ["TI-3104", "TI-3108", "TI-3112", "TI-3115", "TI-3118"];

fn simulate(rng: &mut ChaCha8Rng) -> Vec<Truth> {
    let minutes = DAYS * 1440;
    let mut col = Column { x: [0.5; STAGES] };
    let mut moves = Moves {
        feed: 1.0,
        reflux: 1.6,
        boilup: 2.1,
        z_feed: 0.5,
    };
    // Setpoints the flow controllers track with a 3-minute lag.
    let mut sp_feed = 1.0;
    let mut sp_reflux = 1.6;
    let mut sp_cut = 0.0; // distillate draw relative to the feed's benzene, D = F (z + cut)
    let mut next_move = 0usize;
    let mut block = 0usize;
    let mut order = [0usize, 1, 2];
    let mut z_drift = 0.0;
    let mut p_top = 103.0;
    // Warm start: settle the column for two days at the initial moves.
    for _ in 0..(2 * 1440 * SUBSTEPS) {
        col.step(moves, 1.0 / SUBSTEPS as f64);
    }
    let mut out = Vec::with_capacity(minutes);
    for minute in 0..minutes {
        if minute >= next_move {
            // Operators cycle through high purity, normal and loose operation (pushing
            // throughput), in a shuffled order within each round of three.
            if block.is_multiple_of(3) {
                for i in (1..3).rev() {
                    order.swap(i, rng.gen_range(0..=i));
                }
            }
            let regime = order[block % 3];
            block += 1;
            sp_cut = if regime == 0 {
                rng.gen_range(-0.03..-0.008)
            } else if regime == 1 {
                rng.gen_range(-0.008..0.006)
            } else {
                rng.gen_range(0.008..0.04)
            };
            sp_feed = rng.gen_range(0.8..1.2);
            sp_reflux = sp_feed * rng.gen_range(1.3..1.9);
            next_move = minute + rng.gen_range(480..1200);
        }
        z_drift = 0.999 * z_drift + 0.0003 * gauss(rng);
        moves.z_feed = 0.5 + z_drift;
        p_top = 103.0 + 0.98 * (p_top - 103.0) + 0.08 * gauss(rng);
        let lag = 1.0 / 3.0;
        moves.feed += lag * (sp_feed - moves.feed);
        moves.reflux += lag * (sp_reflux - moves.reflux);
        let distillate = sp_feed * (0.5 + sp_cut);
        let sp_boilup = moves.reflux + distillate;
        moves.boilup += lag * (sp_boilup - moves.boilup);
        for _ in 0..SUBSTEPS {
            col.step(moves, 1.0 / SUBSTEPS as f64);
        }
        let mut temps = [0.0; 5];
        for (t, &tray) in temps.iter_mut().zip(&TEMPERATURE_TRAYS) {
            let p = p_top + 0.7 * (STAGES - 1 - tray) as f64; // 0.7 kPa per tray
            *t = bubble_point(col.x[tray], p);
        }
        out.push(Truth {
            feed: moves.feed * 60.0 * 0.085, // kmol/min → t/h at about 85 kg/kmol
            reflux: moves.reflux * 60.0 * 0.079,
            steam: moves.boilup * 60.0 * 0.0145, // t/h of steam per kmol/min of vapour (latent heats)
            pressure: p_top,
            temps,
            impurity: 100.0 * (1.0 - col.x[STAGES - 1]),
        });
    }
    out
}

fn timestamp(minute: usize) -> String {
    let secs = START_EPOCH + 60 * minute as i64;
    let days = secs.div_euclid(86_400);
    let tod = secs.rem_euclid(86_400);
    // Civil date from days (Hinnant's algorithm).
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!(
        "{y:04}-{m:02}-{d:02} {:02}:{:02}:{:02}",
        tod / 3600,
        (tod / 60) % 60,
        tod % 60
    )
}

/// The process-tag header of the historian exports.
pub const HEADER: &str =
    "time,FI-3001,FI-3002,FI-3003,PI-3001,TI-3104,TI-3108,TI-3112,TI-3115,TI-3118,AI-3010";

/// Analyzer dead time in minutes (sample line plus one chromatograph cycle).
pub const ANALYZER_DEAD_TIME: usize = 10;
/// Minutes between analyzer updates.
pub const ANALYZER_CYCLE: usize = 5;
/// Hours between lab samples.
pub const LAB_EVERY_HOURS: usize = 4;
/// Minutes from drawing a lab sample to its result.
pub const LAB_DELAY_MIN: usize = 90;

/// Generates all files' contents: (file name, text).
pub fn generate() -> Vec<(String, String)> {
    let mut rng = ChaCha8Rng::seed_from_u64(SEED);
    let truth = simulate(&mut rng);
    let n = truth.len();
    let mut rows: Vec<Vec<String>> = Vec::with_capacity(n);
    let mut analyzer_value = truth[0].impurity;
    for (k, t) in truth.iter().enumerate() {
        if k.is_multiple_of(ANALYZER_CYCLE) && k >= ANALYZER_DEAD_TIME {
            let true_value = truth[k - ANALYZER_DEAD_TIME].impurity;
            analyzer_value =
                (true_value * (1.0 + 0.02 * gauss(&mut rng)) + 0.002 * gauss(&mut rng)).max(0.0005);
        }
        let mut row = vec![
            timestamp(k),
            format!("{:.3}", t.feed * (1.0 + 0.004 * gauss(&mut rng))),
            format!("{:.3}", t.reflux * (1.0 + 0.004 * gauss(&mut rng))),
            format!("{:.3}", t.steam * (1.0 + 0.004 * gauss(&mut rng))),
            format!("{:.2}", t.pressure + 0.1 * gauss(&mut rng)),
        ];
        for temp in t.temps {
            row.push(format!(
                "{:.2}",
                quantize(temp + 0.04 * gauss(&mut rng), 0.01)
            ));
        }
        row.push(format!("{analyzer_value:.4}"));
        rows.push(row);
    }
    // Defects. Column indices: 1 FI-3001, 2 FI-3002, 3 FI-3003, 4 PI-3001, 5..=9 TI, 10 AI.
    let day = 1440;
    for row in &mut rows[(3 * day + 600)..(3 * day + 620)] {
        row[7] = "I/O Timeout".into(); // TI-3112 loses its I/O card for 20 minutes
    }
    for i in 0..12 {
        let k = 5 * day + 97 * i + 13;
        rows[k][2] = "Bad".into(); // FI-3002 sporadic bad quality
    }
    let frozen_from = 13 * day + 400;
    let frozen_value = rows[frozen_from][6].clone();
    for row in rows.iter_mut().skip(frozen_from).take(300) {
        row[6] = frozen_value.clone(); // TI-3108 stuck for 5 hours
    }
    for i in 0..6 {
        let k = 2 * day + 1913 * i + 71;
        let v: f64 = rows[k][5].parse().unwrap_or(0.0);
        let sign = if i % 2 == 0 { 1.0 } else { -1.0 };
        rows[k][5] = format!("{:.2}", v + sign * 9.0); // TI-3104 single-sample spikes
    }
    for d in 1..DAYS {
        for row in &mut rows[(d * day + 360)..(d * day + 380)] {
            row[10] = "Calibrating".into(); // analyzer daily validation run
        }
    }
    // A historian outage of 3 hours on day 9: rows missing from the export.
    let outage = (9 * day + 200)..(9 * day + 380);
    // Two exports, the second overlapping the first by 30 minutes (duplicated rows).
    let split = 11 * day;
    let mut part_a = String::new();
    let mut part_b = String::new();
    writeln!(part_a, "{HEADER}").ok();
    writeln!(part_b, "{HEADER}").ok();
    for (k, row) in rows.iter().enumerate() {
        if outage.contains(&k) {
            continue;
        }
        let line = row.join(",");
        if k < split {
            writeln!(part_a, "{line}").ok();
        }
        if k >= split - 30 {
            writeln!(part_b, "{line}").ok();
        }
    }
    // Lab: a distillate sample every 4 hours, result stamped 90 minutes later.
    let mut lab = String::from("result_time,LAB-3010\n");
    let mut k = 60;
    while k + LAB_DELAY_MIN < n {
        let value = truth[k].impurity * (1.0 + 0.03 * gauss(&mut rng));
        let result = timestamp(k + LAB_DELAY_MIN);
        if k / 60 == 13 * 24 + 9 {
            writeln!(lab, "{result},Not analyzed").ok(); // one sample lost in the lab
        } else {
            writeln!(lab, "{result},{value:.4}").ok();
        }
        k += LAB_EVERY_HOURS * 60;
    }
    vec![
        ("c301-export-1.csv".to_string(), part_a),
        ("c301-export-2.csv".to_string(), part_b),
        ("c301-lab.csv".to_string(), lab),
    ]
}

/// Writes the files into `dir`; returns their paths.
pub fn write_files(dir: &Path) -> std::io::Result<Vec<PathBuf>> {
    std::fs::create_dir_all(dir)?;
    let mut written = Vec::new();
    for (name, text) in generate() {
        let path = dir.join(name);
        std::fs::write(&path, text)?;
        written.push(path);
    }
    Ok(written)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bubble_points_of_the_pure_components_at_one_atmosphere() {
        // Normal boiling points: benzene 80.1 °C, toluene 110.6 °C (CRC Handbook; from memory).
        assert!((bubble_point(1.0, 101.325) - 80.1).abs() < 0.1);
        assert!((bubble_point(0.0, 101.325) - 110.6).abs() < 0.1);
    }

    #[test]
    fn timestamps_start_on_the_second_of_march_2026() {
        assert_eq!(timestamp(0), "2026-03-02 00:00:00");
        assert_eq!(timestamp(1441), "2026-03-03 00:01:00");
    }
}
