//! Long-format exports (one row per tag and time): read to the same data as the wide export of
//! the same plant, in time order or sorted by tag; a wide config on a long file names the
//! setting; a tag in no row is a clean error; lab files and `replay` read the long format too.

mod common;

use common::{assert_clean_failure, regimix, stamp, write, Lcg};
use regimix_builder::config::Config;
use regimix_builder::prepare::{prepare, Prepared};

const CONFIG: &str = "
data:
  files: [plant.csv]
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

/// 200 minutes of three tags with a marker, a blank, a spike and a tag the config does not use
/// (`XX-9`), as a wide export and as the long export of the same cells (in time order).
fn plant() -> (String, String) {
    let mut rng = Lcg(11);
    let mut wide = String::from("time,TI-A,TI-B,XX-9,AI-1\n");
    let mut long = String::from("time,tag,value,quality\n");
    for k in 0..200usize {
        let mut a = format!(
            "{:.3}",
            100.0 + 5.0 * (k as f64 / 40.0).sin() + 0.1 * rng.next()
        );
        if (30..33).contains(&k) {
            a = "Bad".into();
        }
        if k == 50 {
            a = String::new();
        }
        if k == 90 {
            a = "180.0".into(); // a spike
        }
        let b = format!("{:.3}", 80.0 + 0.2 * rng.next());
        let y = format!("{:.4}", 1.0 + 0.01 * rng.next());
        let t = stamp(k);
        wide.push_str(&format!("{t},{a},{b},7,{y}\n"));
        for (tag, value) in [
            ("TI-A", &a),
            ("TI-B", &b),
            ("XX-9", &"7".to_string()),
            ("AI-1", &y),
        ] {
            if !value.is_empty() {
                long.push_str(&format!("{t},{tag},{value},good\n"));
            }
        }
    }
    (wide, long)
}

fn prepared(dir: &std::path::Path, csv: &str, config: &str) -> Prepared {
    write(dir, "plant.csv", csv);
    let path = write(dir, "c.yaml", config);
    prepare(&Config::load(&path).expect("config")).expect("prepare")
}

const LONG: &str = "  timestamp: time\n  long-format: { tag-column: tag, value-column: value }";

fn same_data(a: &Prepared, b: &Prepared) {
    let bits = |x: &f64| x.to_bits();
    let (da, db) = (&a.dataset, &b.dataset);
    assert_eq!(da.grid.len, db.grid.len);
    assert!(da.inputs.iter().map(bits).eq(db.inputs.iter().map(bits)));
    assert_eq!(da.input_status, db.input_status);
    assert!(da.target.iter().map(bits).eq(db.target.iter().map(bits)));
    assert_eq!(da.target_status, db.target_status);
    for (ta, tb) in a.audit.tags.iter().zip(&b.audit.tags) {
        assert_eq!(
            (&ta.markers, ta.spikes, ta.valid_percent, ta.observations),
            (&tb.markers, tb.spikes, tb.valid_percent, tb.observations),
            "{}",
            ta.tag
        );
    }
}

#[test]
fn a_long_export_reads_as_the_wide_one_in_any_row_order() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (wide, long) = plant();
    let from_wide = prepared(dir.path(), &wide, CONFIG);
    assert_eq!(from_wide.audit.tags[0].markers.get("Bad"), Some(&3));
    assert_eq!(from_wide.audit.tags[0].spikes, 1);
    let config = CONFIG.replace("  timestamp: time", LONG);
    let from_long = prepared(dir.path(), &long, &config);
    same_data(&from_wide, &from_long);
    assert_eq!(from_long.audit.duplicate_rows, 0);

    // Sorted by tag, as many historian queries return it: the same data.
    let mut lines: Vec<&str> = long.lines().skip(1).collect();
    lines.sort_by_key(|l| l.split(',').nth(1).unwrap_or(""));
    let by_tag = format!("time,tag,value,quality\n{}\n", lines.join("\n"));
    same_data(&from_wide, &prepared(dir.path(), &by_tag, &config));

    // A tag given twice at one time is a duplicate: its last value counts.
    let twice = long.replacen(
        &format!("{},TI-B,", stamp(5)),
        &format!("{},TI-B,95.0,good\n{},TI-B,", stamp(5), stamp(5)),
        1,
    );
    let again = prepared(dir.path(), &twice, &config);
    same_data(&from_wide, &again);
    assert_eq!(again.audit.duplicate_rows, 1);
}

/// A quality column: rows whose code is not a good one read as quality markers under their
/// code, as the same cells written `Bad` in a wide export; codes compare without regard to case,
/// and numeric codes work when listed.
#[test]
fn a_quality_column_marks_rows_with_bad_codes() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (wide, long) = plant();
    let bad_minutes = 60..64usize;
    let mut wide_bad = String::new();
    for (i, line) in wide.lines().enumerate() {
        let mut fields: Vec<String> = line.split(',').map(str::to_string).collect();
        if i > 0 && bad_minutes.contains(&(i - 1)) {
            fields[2] = "Bad".into();
        }
        wide_bad.push_str(&(fields.join(",") + "\n"));
    }
    let from_wide = prepared(dir.path(), &wide_bad, CONFIG);
    assert_eq!(from_wide.audit.tags[1].markers.get("Bad"), Some(&4));
    let coded = |good: &str, bad: &str| {
        long.lines()
            .map(|line| {
                let mut fields: Vec<String> = line.split(',').map(str::to_string).collect();
                if fields[1] == "TI-B" && bad_minutes.clone().any(|m| fields[0] == stamp(m)) {
                    fields[3] = bad.into();
                } else if fields[3] == "good" {
                    fields[3] = good.into();
                }
                fields.join(",") + "\n"
            })
            .collect::<String>()
    };
    let with_quality = |good: &str| {
        CONFIG.replace(
            "  timestamp: time",
            &format!(
                "  timestamp: time\n  long-format: {{ tag-column: tag, value-column: value, quality-column: quality{good} }}"
            ),
        )
    };
    same_data(
        &from_wide,
        &prepared(dir.path(), &coded("GOOD", "Bad"), &with_quality("")),
    );
    let numeric = prepared(
        dir.path(),
        &coded("192", "Bad"),
        &with_quality(", good-quality: [192]"),
    );
    same_data(&from_wide, &numeric);
}

#[test]
fn a_wide_config_on_a_long_file_names_the_setting_and_a_missing_tag_is_named() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (_, long) = plant();
    write(dir.path(), "plant.csv", &long);
    write(dir.path(), "c.yaml", CONFIG);
    let out = regimix(dir.path(), &["check", "c.yaml"]);
    assert_clean_failure(
        &out,
        "the rows name tags in column `tag`: a long-format export (one row per tag and time); set `long-format: { tag-column: tag, value-column: … }`",
    );
    let config = CONFIG
        .replace("  timestamp: time", LONG)
        .replace("tag: TI-B", "tag: TI-C");
    write(dir.path(), "c.yaml", &config);
    let out = regimix(dir.path(), &["check", "c.yaml"]);
    assert_clean_failure(
        &out,
        "no rows for `TI-C` (the input) in column `tag`; did you mean `TI-A`, `TI-B`",
    );
}

/// A LIMS export: one row per sample and analysis, other analyses in between.
#[test]
fn lab_results_in_long_format_read_as_a_wide_lab_file() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (wide, _) = plant();
    write(dir.path(), "plant.csv", &wide);
    let mut lab_wide = String::from("sampled,LAB-1\n");
    let mut lab_long = String::from("sampled,analysis,result\n");
    for i in 0..8usize {
        let t = stamp(10 + 20 * i);
        let v = format!("{:.3}", 0.5 + 0.01 * i as f64);
        lab_wide.push_str(&format!("{t},{v}\n"));
        lab_long.push_str(&format!("{t},DENSITY,0.81\n{t},LAB-1,{v}\n"));
    }
    write(dir.path(), "lab-wide.csv", &lab_wide);
    write(dir.path(), "lab-long.csv", &lab_long);
    let config = |file: &str, long: &str| {
        format!(
            "data:\n  files: [plant.csv]\n  timestamp: time\nsample-time: 1min\n\
             target:\n  tag: LAB-1\n  source: lab\n  lab:\n    files: [{file}]\n    timestamp: sampled\n{long}\
             inputs:\n  - {{ tag: TI-A }}\n"
        )
    };
    let run = |text: String| {
        let path = write(dir.path(), "c.yaml", &text);
        prepare(&Config::load(&path).expect("config")).expect("prepare")
    };
    let a = run(config("lab-wide.csv", ""));
    let b = run(config(
        "lab-long.csv",
        "    long-format: { tag-column: analysis, value-column: result }\n",
    ));
    assert_eq!(a.dataset.usable_target_rows(), 8);
    same_data(&a, &b);
}

/// `replay --long-format` gives the same estimates as the wide file.
#[test]
fn replay_reads_the_long_format() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (wide, long) = plant();
    write(dir.path(), "plant.csv", &wide);
    write(
        dir.path(),
        "c.yaml",
        &CONFIG.replace(
            "inputs:",
            "structure: { max-lag: 3min }\nregimes: { count: 2 }\ninputs:",
        ),
    );
    let built = regimix(dir.path(), &["build", "c.yaml", "--out", "o", "--quiet"]);
    assert!(
        built.status.success(),
        "{}",
        String::from_utf8_lossy(&built.stderr)
    );
    write(dir.path(), "long.csv", &long);
    let a = regimix(dir.path(), &["replay", "o/model.rgmx", "plant.csv"]);
    let long = |extra: &[&str]| {
        let mut args = vec![
            "replay",
            "o/model.rgmx",
            "long.csv",
            "--long-format",
            "tag",
            "value",
        ];
        args.extend_from_slice(extra);
        regimix(dir.path(), &args)
    };
    let b = long(&[]);
    assert!(b.status.success(), "{}", String::from_utf8_lossy(&b.stderr));
    assert_eq!(a.stdout, b.stdout);
    // Every row's code is `good`: the default good code, compared without regard to case.
    let q = long(&["--quality-column", "quality"]);
    assert_eq!(a.stdout, q.stdout, "{}", String::from_utf8_lossy(&q.stderr));
    // With another good code, every row is bad: each input warned about, no estimate.
    let bad = long(&["--quality-column", "quality", "--good-quality", "192"]);
    let stderr = String::from_utf8_lossy(&bad.stderr);
    assert!(stderr.contains("(most often `good`)"), "{stderr}");
    let c = regimix(dir.path(), &["replay", "o/model.rgmx", "long.csv"]);
    assert_clean_failure(&c, "pass `--long-format tag VALUE_COLUMN`");
}
