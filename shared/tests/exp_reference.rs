//! `regimix_format::exp::exp` against correctly rounded values of e^x computed with Python's
//! standard `decimal` module at 50 digits (fixture written by scripts/fixtures/exp_decimal.py;
//! the Python version is in the fixture's first line).

use regimix_format::exp::exp;

fn ulps(a: f64, b: f64) -> u64 {
    (a.to_bits() as i64 - b.to_bits() as i64).unsigned_abs()
}

#[test]
fn within_one_ulp_of_correctly_rounded_values() {
    let text = include_str!("fixtures/exp_decimal.csv");
    let mut histogram = [0usize; 2];
    let mut count = 0;
    for line in text
        .lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with('x'))
    {
        let (x, y) = line.split_once(',').expect("two columns");
        let x = f64::from_bits(u64::from_str_radix(x, 16).expect("hex"));
        let reference = f64::from_bits(u64::from_str_radix(y, 16).expect("hex"));
        let got = exp(x);
        let error = ulps(got, reference);
        assert!(
            error <= 1,
            "exp({x:e}) = {got:e}, reference {reference:e}: {error} ulp"
        );
        histogram[error as usize] += 1;
        count += 1;
    }
    assert_eq!(count, 4018);
    // Most results are the correctly rounded double itself (measured: see the module docs).
    assert!(histogram[0] * 100 >= 99 * count, "{histogram:?}");
}
