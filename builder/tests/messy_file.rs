//! A historian export with every defect `check` must find — quality markers, a frozen stretch, a
//! gap, a spike, duplicated timestamps — and the exact findings expected.

mod common;

use common::{regimix, stamp, write, Lcg};
use regimix_builder::config::Config;
use regimix_builder::prepare::prepare;

const CONFIG: &str = "
data:
  files: [messy.csv]
  timestamp: time
sample-time: 1min
hold-limit: 3min
screening:
  frozen-after: 1h
target:
  tag: AI-1
  unit: '%'
  source: analyzer
inputs:
  - { tag: TI-A, unit: degC, range: [0, 200] }
  - { tag: TI-B, unit: degC }
";

/// Row layout: 300 minutes; rows 250..270 missing (a 21-minute gap between 249 and 270).
fn messy_csv() -> String {
    let mut rng = Lcg(42);
    let mut out = String::from("time,TI-A,TI-B,AI-1\n");
    for k in 0..300usize {
        if (250..270).contains(&k) {
            continue;
        }
        let mut a = format!(
            "{:.4}",
            100.0 + 5.0 * (k as f64 / 100.0).sin() + 0.05 * rng.next()
        );
        let b_value = 80.0 + 0.1 * rng.next();
        let b = if (150..230).contains(&k) {
            "81.2345".to_string()
        } else {
            format!("{b_value:.4}")
        };
        let y = format!("{:.4}", 1.0 + 0.01 * rng.next());
        if (50..55).contains(&k) {
            a = "Bad".into();
        }
        if k == 80 {
            a = "I/O Timeout".into();
        }
        if k == 81 {
            a = String::new();
        }
        if k == 120 {
            a = "150.0".into(); // a spike
        }
        if k == 200 {
            a = "250".into(); // outside the range [0, 200]
        }
        let line = format!("{},{a},{b},{y}\n", stamp(k));
        out.push_str(&line);
        if k == 10 || k == 11 {
            out.push_str(&line); // duplicated rows
        }
    }
    out
}

#[test]
fn check_reports_each_defect_exactly() {
    let dir = tempfile::tempdir().expect("tempdir");
    write(dir.path(), "messy.csv", &messy_csv());
    let cfg = write(dir.path(), "c.yaml", CONFIG);
    let prepared = prepare(&Config::load(&cfg).expect("config")).expect("prepare");
    let audit = &prepared.audit;

    assert_eq!(audit.duplicate_rows, 2);
    assert_eq!(audit.first, "2026-03-02T00:00:00Z");
    assert_eq!(audit.last, "2026-03-02T04:59:00Z");
    assert_eq!(audit.grid_samples, 300);
    let gap = audit.widest_gap.as_ref().expect("gap");
    assert_eq!(
        (gap.start.as_str(), gap.duration.as_str()),
        ("2026-03-02T04:09:00Z", "21min")
    );
    assert_eq!(audit.median_interval.as_deref(), Some("1min"));

    let a = &audit.tags[0];
    assert_eq!(a.tag, "TI-A");
    assert_eq!(a.markers.get("Bad"), Some(&5));
    assert_eq!(a.markers.get("I/O Timeout"), Some(&1));
    assert_eq!(a.markers.len(), 2);
    assert_eq!(a.spikes, 1);
    assert_eq!(a.out_of_range, 1);
    assert_eq!(
        a.observations, 279,
        "282 rows less the empty cell and two collapsed duplicates"
    );
    assert!(a.frozen.is_empty());
    // Invalid grid cells: 5 Bad + 2 (I/O Timeout, then the blank that does not renew it) + 1 spike
    // + 1 out of range + 17 gap cells beyond the 3-minute hold (253..=269).
    let dataset = &prepared.dataset;
    let valid_a = (0..300)
        .filter(|&k| dataset.input_status[[k, 0]] == regimix_builder::prepare::CellStatus::Valid)
        .count();
    assert_eq!(valid_a, 300 - 5 - 2 - 1 - 1 - 17);

    let b = &audit.tags[1];
    assert_eq!(b.frozen.len(), 1);
    assert_eq!(b.frozen[0].start, "2026-03-02T02:30:00Z");
    assert_eq!(b.frozen[0].samples, 80);
    assert_eq!(b.spikes, 0);
    assert!(b.markers.is_empty());

    assert!(audit
        .warnings
        .iter()
        .any(|w| w.contains("no rows at all for 21min")));
    assert!(audit
        .warnings
        .iter()
        .any(|w| w.contains("TI-B: frozen for 80min")));
    // Counts of one read in the singular.
    for expected in [
        "TI-A: 1 spike removed by the Hampel filter",
        "TI-A: 1 value outside the configured range",
        "TI-A: 6 cells with quality markers",
    ] {
        assert!(
            audit.warnings.iter().any(|w| w.starts_with(expected)),
            "{expected}: {:?}",
            audit.warnings
        );
    }
}

#[test]
fn check_json_carries_the_same_findings() {
    let dir = tempfile::tempdir().expect("tempdir");
    write(dir.path(), "messy.csv", &messy_csv());
    write(dir.path(), "c.yaml", CONFIG);
    let out = regimix(dir.path(), &["check", "c.yaml", "--json"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let json: serde_json::Value = serde_json::from_slice(&out.stdout).expect("valid JSON");
    assert_eq!(json["duplicate_rows"], 2);
    assert_eq!(json["tags"][0]["markers"]["Bad"], 5);
    assert_eq!(json["tags"][0]["spikes"], 1);
    assert_eq!(json["tags"][1]["frozen"][0]["samples"], 80);
    assert_eq!(json["widest_gap"]["duration"], "21min");
    let text = regimix(dir.path(), &["check", "c.yaml"]);
    let text = String::from_utf8_lossy(&text.stdout);
    assert!(text.contains("\"I/O Timeout\" ×1"), "{text}");
    assert!(
        text.contains("TI-B             from 2026-03-02T02:30:00Z for 80min (80 samples)"),
        "{text}"
    );
}

/// The same export as a European locale writes it: `;` between fields, a decimal comma. Read
/// with the default decimal point, every number is text: `check` counts those numbers as one
/// item beside the real markers, names the setting once for all tags, and leaves out the
/// findings that follow from it; with `decimal-mark: ","` the findings are the originals.
#[test]
fn a_decimal_comma_export_is_explained_then_read_alike() {
    let dir = tempfile::tempdir().expect("tempdir");
    let european = messy_csv().replace(',', ";").replace('.', ",");
    write(dir.path(), "messy.csv", &european);
    let semicolons = CONFIG.replace("  timestamp: time", "  timestamp: time\n  delimiter: \";\"");
    write(dir.path(), "c.yaml", &semicolons);
    let text = regimix(dir.path(), &["check", "c.yaml"]);
    let text = String::from_utf8_lossy(&text.stdout);
    let warnings: Vec<&str> = text.lines().filter(|l| l.starts_with("  - ")).collect();
    let decimal: Vec<&&str> = warnings.iter().filter(|l| l.contains("decimal")).collect();
    assert_eq!(decimal.len(), 1, "one warning for every tag: {text}");
    assert!(
        decimal[0].contains("TI-A, TI-B and AI-1: cells like")
            && decimal[0]
                .contains("are numbers with a decimal comma: set `data.decimal-mark: \",\"`"),
        "{text}"
    );
    // What follows from the setting is not reported as well.
    assert!(
        !warnings
            .iter()
            .any(|l| l.contains("quality markers") || l.contains("samples are usable")),
        "{text}"
    );
    let line = text
        .lines()
        .find(|l| l.starts_with("  TI-A ") && l.contains('×'))
        .expect("marker line");
    // The real markers of the original (5 × Bad, 1 × I/O Timeout) stay listed by name.
    assert!(
        line.contains("numbers with the other decimal mark ×")
            && line.contains("\"Bad\" ×5")
            && line.contains("\"I/O Timeout\" ×1"),
        "{line}"
    );

    let cfg = write(
        dir.path(),
        "c.yaml",
        &semicolons.replace(
            "  timestamp: time",
            "  timestamp: time\n  decimal-mark: \",\"",
        ),
    );
    let comma = prepare(&Config::load(&cfg).expect("config")).expect("prepare");
    write(dir.path(), "messy.csv", &messy_csv());
    let cfg = write(dir.path(), "c.yaml", CONFIG);
    let point = prepare(&Config::load(&cfg).expect("config")).expect("prepare");
    assert_eq!(comma.audit.tags, point.audit.tags);
    assert_eq!(comma.audit.warnings, point.audit.warnings);
    // Bit for bit (invalid cells hold NaN, which `==` never matches).
    let bits = |d: &regimix_builder::prepare::Prepared| -> Vec<u64> {
        d.dataset.inputs.iter().map(|v| v.to_bits()).collect()
    };
    assert_eq!(bits(&comma), bits(&point));
}

/// TI-A written in thousandths with digits grouped in threes (`"100,123.4"`, as spreadsheets
/// write large numbers) reads as the same numbers written without grouping; a comma with three
/// digits and no decimal point behind it (`"100,123"`) could be a decimal comma: text, and
/// `check` names both readings.
#[test]
fn grouped_digits_read_as_the_same_numbers() {
    let dir = tempfile::tempdir().expect("tempdir");
    let config = CONFIG.replace("range: [0, 200]", "range: [0, 200000]");
    let cfg = write(dir.path(), "c.yaml", &config);
    let rewrite = |form: &dyn Fn(f64) -> String| -> String {
        messy_csv()
            .lines()
            .map(|line| {
                let mut cells: Vec<String> = line.split(',').map(String::from).collect();
                if let Some(v) = cells.get(1).and_then(|c| c.parse::<f64>().ok()) {
                    cells[1] = form(v * 1000.0);
                }
                cells.join(",") + "\n"
            })
            .collect()
    };
    let group = |v: f64| {
        let text = format!("{v:.1}");
        let (int, frac) = text.split_once('.').expect("point");
        let (thousands, units) = int.split_at(int.len() - 3);
        format!("\"{thousands},{units}.{frac}\"")
    };
    write(dir.path(), "messy.csv", &rewrite(&|v| format!("{v:.1}")));
    let plain = prepare(&Config::load(&cfg).expect("config")).expect("plain");
    let text = rewrite(&group);
    assert!(text.contains("\"100,"), "grouped cells: {}", &text[..200]);
    write(dir.path(), "messy.csv", &text);
    let grouped = prepare(&Config::load(&cfg).expect("config")).expect("grouped");
    assert_eq!(grouped.audit.tags, plain.audit.tags);
    let bits = |d: &regimix_builder::prepare::Prepared| -> Vec<u64> {
        d.dataset.inputs.iter().map(|v| v.to_bits()).collect()
    };
    assert_eq!(bits(&grouped), bits(&plain));

    write(
        dir.path(),
        "messy.csv",
        &rewrite(&|v| group(v.round()).replace(".0\"", "\"")),
    );
    let out = regimix(dir.path(), &["check", "c.yaml"]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains(
            "are numbers with a decimal comma: set `data.decimal-mark: \",\"` (if the `,` groups \
             thousands instead, export the numbers without digit grouping)"
        ),
        "{text}"
    );
}

/// Lab results under a detection limit (`<0.05`) are counted on their own, not as markers, and
/// become what `target.lab.below-limit` says: left out, half the limit, or the limit. A `<`
/// reading in a process tag is bad.
#[test]
fn below_limit_lab_results_follow_the_setting() {
    let dir = tempfile::tempdir().expect("tempdir");
    let mut data = String::from("time,TI-A\n");
    for k in 0..300usize {
        let a = if k == 40 {
            "<1".to_string()
        } else {
            format!("{:.2}", 100.0 + (k as f64 / 30.0).sin())
        };
        data.push_str(&format!("{},{a}\n", stamp(k)));
    }
    write(dir.path(), "data.csv", &data);
    // Ten results, every 25 min from minute 20; three below the 0.05 limit.
    let mut lab = String::from("time,LAB-1\n");
    for i in 0..10usize {
        let value = if [2, 5, 7].contains(&i) {
            "<0.05".to_string()
        } else {
            format!("{:.3}", 0.2 + 0.01 * i as f64)
        };
        lab.push_str(&format!("{},{value}\n", stamp(20 + 25 * i)));
    }
    write(dir.path(), "lab.csv", &lab);
    let config = |policy: &str| {
        format!(
            "data:\n  files: [data.csv]\n  timestamp: time\nsample-time: 1min\nhold-limit: 3min\n\
             target:\n  tag: LAB-1\n  unit: '%'\n  source: lab\n  range: [0, 10]\n  lab:\n    \
             files: [lab.csv]\n{policy}\ninputs:\n  - {{ tag: TI-A, unit: degC }}\n"
        )
    };
    let run = |policy: &str| {
        let cfg = write(dir.path(), "c.yaml", &config(policy));
        prepare(&Config::load(&cfg).expect("config")).expect("prepare")
    };
    let rows = [20 + 25 * 2, 20 + 25 * 5, 20 + 25 * 7];

    let skip = run("");
    let target = skip.audit.tags.last().expect("target");
    assert_eq!((target.below_limit, target.below_limit_used), (3, 0));
    assert!(target.markers.is_empty(), "{:?}", target.markers);
    assert_eq!(skip.dataset.usable_target_rows(), 7);
    assert!(skip.audit.warnings.iter().any(|w| w.contains(
        "LAB-1: 3 results (30 %) are below a detection limit (`<` and a number) and were left out"
    )));
    let input = &skip.audit.tags[0];
    assert_eq!(input.below_limit, 1);
    assert_eq!(
        skip.dataset.input_status[[40, 0]],
        regimix_builder::prepare::CellStatus::Bad
    );
    assert!(skip
        .audit
        .warnings
        .iter()
        .any(|w| w == "TI-A: 1 cell with below-limit readings (`<` and a number), treated as bad"));

    for (policy, value) in [
        ("    below-limit: half", 0.025),
        ("    below-limit: limit", 0.05),
    ] {
        let used = run(policy);
        assert_eq!(used.dataset.usable_target_rows(), 10, "{policy}");
        for k in rows {
            assert_eq!(used.dataset.target[k], value, "{policy}");
        }
        let target = used.audit.tags.last().expect("target");
        assert_eq!((target.below_limit, target.below_limit_used), (3, 3));
        // 30 % is above the 15 % share for simple substitution.
        assert!(used
            .audit
            .warnings
            .iter()
            .any(|w| w.starts_with("LAB-1: 30 % of results are below the limit")));
    }
}

/// An export with rows of descriptions and units under its header reads to the same data as
/// one without them, and `check` lists the skipped rows with their file.
#[test]
fn label_rows_under_the_header_are_skipped_and_listed() {
    let dir = tempfile::tempdir().expect("tempdir");
    let plain = messy_csv();
    let (header, rest) = plain.split_once('\n').expect("header");
    write(
        dir.path(),
        "messy.csv",
        &format!("{header}\nDescription,Tray 4,Tray 9,Toluene in distillate\n,degC,degC,%\n{rest}"),
    );
    let cfg = write(dir.path(), "c.yaml", CONFIG);
    let labelled = prepare(&Config::load(&cfg).expect("config")).expect("prepare");
    let text = regimix(dir.path(), &["check", "c.yaml"]);
    let text = String::from_utf8_lossy(&text.stdout);
    assert!(
        text.contains(
            "messy.csv (282 rows; 2 label rows under the header skipped: `Description`, (blank))"
        ),
        "{text}"
    );
    write(dir.path(), "messy.csv", &plain);
    let bare = prepare(&Config::load(&cfg).expect("config")).expect("prepare");
    assert_eq!(labelled.audit.tags, bare.audit.tags);
    assert_eq!(labelled.audit.warnings, bare.audit.warnings);
    assert_eq!(labelled.audit.files[0].label_rows, ["Description", ""]);
    assert!(bare.audit.files[0].label_rows.is_empty());
}

/// An export in Windows-1252 (a `°C` in a header, a German quality marker): read, not refused;
/// the marker is counted under its text and `check` says how many fields were read that way.
#[test]
fn a_windows_1252_export_is_read_and_reported() {
    let dir = tempfile::tempdir().expect("tempdir");
    let plain = messy_csv();
    let cfg = write(dir.path(), "c.yaml", CONFIG);
    let mut bytes = Vec::new();
    for (k, line) in plain.lines().enumerate() {
        for part in line.split_inclusive("I/O Timeout") {
            match part.strip_suffix("I/O Timeout") {
                Some(head) => {
                    bytes.extend_from_slice(head.as_bytes());
                    bytes.extend_from_slice(b"St\xf6rung");
                }
                None => bytes.extend_from_slice(part.as_bytes()),
            }
        }
        bytes.extend_from_slice(if k == 0 { b",TI-9 \xb0C\n" } else { b",1\n" });
    }
    std::fs::write(dir.path().join("messy.csv"), &bytes).expect("write");
    let read = prepare(&Config::load(&cfg).expect("config")).expect("prepare");
    assert_eq!(read.audit.files[0].windows_1252_fields, 2);
    let out = regimix(dir.path(), &["check", "c.yaml"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("messy.csv (282 rows; 2 fields not UTF-8, read as Windows-1252)"),
        "{text}"
    );
    assert!(text.contains("St\u{f6}rung"), "{text}");
}

/// The same export with day-first (`02.03.2026 04:05:00`) and month-first 12-hour
/// (`3/2/2026 4:05:00 AM`) timestamps: refused with a message naming `date-order`, then read to
/// the same findings with `date-order: dmy` and `mdy`.
#[test]
fn day_first_and_month_first_exports_read_alike_with_date_order() {
    let dir = tempfile::tempdir().expect("tempdir");
    let plain = messy_csv();
    let cfg = write(dir.path(), "c.yaml", CONFIG);
    write(dir.path(), "messy.csv", &plain);
    let iso = prepare(&Config::load(&cfg).expect("config")).expect("prepare");
    // `2026-03-DD HH:MM:SS` rewritten field by field.
    let rewrite = |form: &dyn Fn(&str, &str, u32, u32) -> String| -> String {
        plain
            .lines()
            .map(|line| match line.split_once(',') {
                Some((ts, rest)) if ts.starts_with("2026-") => {
                    let (month, day) = (&ts[5..7], &ts[8..10]);
                    let hour: u32 = ts[11..13].parse().expect("hour");
                    let minute: u32 = ts[14..16].parse().expect("minute");
                    format!("{},{rest}\n", form(month, day, hour, minute))
                }
                _ => format!("{line}\n"),
            })
            .collect()
    };
    let day_first = rewrite(&|m, d, h, min| format!("{d}.{m}.2026 {h:02}:{min:02}:00"));
    let month_first = rewrite(&|m, d, h, min| {
        let (h12, half) = match h {
            0 => (12, "AM"),
            1..=11 => (h, "AM"),
            12 => (12, "PM"),
            _ => (h - 12, "PM"),
        };
        let (m, d) = (m.trim_start_matches('0'), d.trim_start_matches('0'));
        format!("{m}/{d}/2026 {h12}:{min:02}:00 {half}")
    });
    assert!(month_first.contains("3/2/2026 12:00:00 AM"), "midnight");
    assert!(month_first.contains("3/2/2026 1:05:00 AM"), "morning");

    write(dir.path(), "messy.csv", &day_first);
    let out = regimix(dir.path(), &["check", "c.yaml"]);
    common::assert_clean_failure(
        &out,
        "day or month first: set `date-order` to `dmy` or `mdy`",
    );
    for (text, order) in [(day_first, "dmy"), (month_first, "mdy")] {
        write(dir.path(), "messy.csv", &text);
        let cfg = write(
            dir.path(),
            "c.yaml",
            &CONFIG.replace(
                "  timestamp: time",
                &format!("  timestamp: time\n  date-order: {order}"),
            ),
        );
        let read = prepare(&Config::load(&cfg).expect("config")).expect(order);
        assert_eq!(read.dataset.grid.len, iso.dataset.grid.len, "{order}");
        assert_eq!(
            read.dataset.grid.time(0),
            iso.dataset.grid.time(0),
            "{order}"
        );
        assert_eq!(read.audit.tags, iso.audit.tags, "{order}");
        assert_eq!(read.audit.warnings, iso.audit.warnings, "{order}");
    }
}

/// A tag name longer than the usual column keeps the `check` table aligned: every row's role
/// starts under the header's `role`.
#[test]
fn a_long_tag_name_keeps_the_check_table_aligned() {
    let dir = tempfile::tempdir().expect("tempdir");
    let long = "TI-B tray 12 outlet temperature";
    write(
        dir.path(),
        "messy.csv",
        &messy_csv().replacen("TI-B", long, 1),
    );
    write(
        dir.path(),
        "c.yaml",
        &CONFIG.replace("tag: TI-B", &format!("tag: {long}")),
    );
    let r = regimix(dir.path(), &["check", "c.yaml"]);
    let text = String::from_utf8_lossy(&r.stdout);
    let header = text
        .lines()
        .find(|l| l.starts_with("  tag "))
        .expect("tags header");
    let column = header.find("role").expect("role column");
    let rows: Vec<&str> = text
        .lines()
        .skip_while(|l| !l.starts_with("  tag "))
        .skip(1)
        .take_while(|l| !l.is_empty())
        .collect();
    assert_eq!(rows.len(), 3, "{text}");
    for row in rows {
        let role = row
            .find(" input ")
            .or_else(|| row.find(" target "))
            .expect("role")
            + 1;
        assert_eq!(role, column, "{row}\n{header}");
    }
}

/// A grid finer than the rows (20 s against 1-minute rows) holds each row over three samples;
/// the Hampel window, which counts observations, is then sized by the rows, so the same
/// observations are flagged as on the 1-minute grid (each over its three samples). Sized by the
/// grid instead, a 15-minute half-window would reach 45 rows each side, and a 20-minute plateau in TI-B (a
/// real move, longer than the 15-row half-window) would be flagged as spikes.
#[test]
fn a_grid_finer_than_the_rows_flags_the_same_spikes() {
    let dir = tempfile::tempdir().expect("tempdir");
    let csv = messy_csv()
        .lines()
        .enumerate()
        .map(|(i, line)| {
            let mut fields: Vec<String> = line.split(',').map(str::to_string).collect();
            // Data lines 41..=60 hold rows 40..=59 (row 10 and 11 are doubled before them).
            if (43..63).contains(&i) {
                let b: f64 = fields[2].parse().expect("TI-B");
                fields[2] = format!("{:.4}", b + 5.0);
            }
            fields.join(",") + "\n"
        })
        .collect::<String>();
    write(dir.path(), "messy.csv", &csv);
    let config = CONFIG.replace(
        "  frozen-after: 1h",
        "  frozen-after: 1h\n  spike-half-window: 15min",
    );
    let minute = write(dir.path(), "c.yaml", &config);
    let fine = write(
        dir.path(),
        "fine.yaml",
        &config.replace("sample-time: 1min", "sample-time: 20s"),
    );
    let spikes = |path| {
        let prepared = prepare(&Config::load(path).expect("config")).expect("prepare");
        prepared
            .audit
            .tags
            .iter()
            .map(|t| t.spikes)
            .collect::<Vec<_>>()
    };
    let at_minute = spikes(&minute);
    assert_eq!(at_minute[1], 0, "the plateau is not a spike");
    let at_20s = spikes(&fine);
    assert_eq!(
        at_20s,
        at_minute.iter().map(|s| 3 * s).collect::<Vec<_>>(),
        "1 min: {at_minute:?}"
    );
}

/// An export that writes a tag only when it changes (a compressing historian) leaves most of its
/// cells empty: `check` says so and names `hold-limit`; with the hold limit raised past the
/// longest interval between records, every sample has a value and the warning goes.
#[test]
fn a_tag_written_only_on_change_points_to_the_hold_limit() {
    let dir = tempfile::tempdir().expect("tempdir");
    let mut rng = Lcg(5);
    let mut csv = String::from("time,TI-A,TI-B,AI-1\n");
    for k in 0..300usize {
        let b = if k % 10 == 0 {
            format!("{:.3}", 80.0 + rng.next())
        } else {
            String::new()
        };
        csv.push_str(&format!(
            "{},{:.3},{b},{:.4}\n",
            stamp(k),
            100.0 + rng.next(),
            1.0 + 0.01 * rng.next()
        ));
    }
    write(dir.path(), "messy.csv", &csv);
    let cfg = write(dir.path(), "c.yaml", CONFIG);
    let audit = prepare(&Config::load(&cfg).expect("config"))
        .expect("prepare")
        .audit;
    assert!(
        audit
            .warnings
            .iter()
            .any(|w| w.starts_with("TI-B: a value in only 30 of 300 rows")
                && w.contains("within `hold-limit` (3min)")),
        "{:?}",
        audit.warnings
    );
    let cfg = write(
        dir.path(),
        "c.yaml",
        &CONFIG.replace("hold-limit: 3min", "hold-limit: 10min"),
    );
    let audit = prepare(&Config::load(&cfg).expect("config"))
        .expect("prepare")
        .audit;
    assert_eq!(audit.tags[1].valid_percent, 100.0);
    assert!(
        !audit.warnings.iter().any(|w| w.contains("hold-limit")),
        "{:?}",
        audit.warnings
    );
}
