//! Findings in sentences: what went in, what came out and what was expected, so that no
//! finding reads as a bare rule name and bit pattern. The terminal, HTML, JUnit and JSON
//! (`message` beside the machine-readable fields) all use these.

use super::BitsValue;
use crate::format::{Class, Format};

/// The shortest decimal that identifies the value within its format ("0.1" for the binary16
/// nearest 0.1, "65504"), "NaN", "+inf"/"-inf", "+0"/"-0".
pub fn value(format: &dyn Format, bits: u32) -> String {
    let v = format.to_f64(bits);
    match format.classify(bits) {
        Class::Nan => "NaN".into(),
        Class::Infinite => if v < 0.0 { "-inf" } else { "+inf" }.into(),
        Class::Zero => if format.is_sign_negative(bits) {
            "-0"
        } else {
            "+0"
        }
        .into(),
        _ => shortest(format, bits, v),
    }
}

/// The fewest significant digits whose decimal lies strictly between the midpoints to the
/// value's neighbours, so that it reads back as this pattern in this format.
fn shortest(format: &dyn Format, bits: u32, v: f64) -> String {
    // Whole numbers are written out ("65504", not "65500"): exact and easy to recognise.
    if v.fract() == 0.0 && v.abs() < 1e16 {
        return format!("{v}");
    }
    let mut up = format.to_f64(format.next_up(bits));
    let mut down = format.to_f64(format.next_down(bits));
    // Past the largest finite value, values round to infinity from half an ulp on.
    if up.is_infinite() {
        up = v + (v - down);
    }
    if down.is_infinite() {
        down = v - (up - v);
    }
    // Midpoints of two values of a narrower format are exact in binary64.
    let (lo, hi) = ((v + down) / 2.0, (v + up) / 2.0);
    for digits in 1..=17 {
        let text = format!("{:.*e}", digits - 1, v);
        let back: f64 = text.parse().unwrap_or(f64::NAN);
        if back > lo && back < hi {
            return plain(back);
        }
    }
    format!("{v:?}")
}

/// A binary64 number as people write it: no exponent between 1e-5 and 1e16.
fn plain(x: f64) -> String {
    let a = x.abs();
    if a != 0.0 && !(1e-5..1e16).contains(&a) {
        return format!("{x:e}");
    }
    format!("{x}")
}

/// "65504 (0x7bff)".
pub fn shown(format: &dyn Format, bits: u32) -> String {
    format!(
        "{} ({})",
        value(format, bits),
        crate::format::hex(format, bits)
    )
}

/// [`value`] of a report value.
pub fn value_of(format: &dyn Format, v: &BitsValue) -> String {
    match crate::format::parse_hex(format, &v.bits) {
        Ok(bits) => value(format, bits),
        Err(_) => v.bits.clone(),
    }
}

/// [`shown`] of a report value.
pub fn shown_of(format: &dyn Format, v: &BitsValue) -> String {
    match crate::format::parse_hex(format, &v.bits) {
        Ok(bits) => shown(format, bits),
        Err(_) => v.bits.clone(),
    }
}

/// [`shown_of`] for a format named in a report ("f16").
pub fn shown_of_name(format: &str, v: &BitsValue) -> String {
    match crate::format::by_name(format) {
        Some(f) => shown_of(f, v),
        None => v.bits.clone(),
    }
}

/// "f(x)" as written in a sentence: NaN inputs keep their bits (the payload may matter).
fn call(format: &dyn Format, input: u32) -> String {
    if format.classify(input) == Class::Nan {
        format!("f({})", shown(format, input))
    } else {
        format!("f({})", value(format, input))
    }
}

/// A special-value rule: the call, what came out, what the rule expects, and the error when
/// both are finite numbers.
#[allow(clippy::too_many_arguments)] // the fields of one rule, as measured
pub fn special(
    input_format: &dyn Format,
    format: &dyn Format,
    input: u32,
    output: Option<u32>,
    expected: u32,
    passed: bool,
    rule: &str,
    ulp: Option<f64>,
    tolerance: f64,
) -> String {
    let fx = call(input_format, input);
    let got = match output {
        None => {
            return format!(
                "{fx} did not return (the kernel crashed or hung); {}",
                expectation(format, expected, rule)
            )
        }
        Some(o) => o,
    };
    let out = shown(format, got);
    let verdict = if passed { ": passed" } else { "" };
    let off = match ulp {
        Some(e) if !passed && e > 0.0 => {
            format!(
                " ({} ulp away; at most {} accepted)",
                round3(e),
                round3(tolerance)
            )
        }
        _ => String::new(),
    };
    if rule.starts_with("subnormal input: flushed") {
        return format!(
            "{fx} = {out}, the output at zero: the subnormal input was flushed to zero (flush-to-zero / denormals-are-zero); the reference is {}{off}",
            shown(format, expected)
        );
    }
    if rule.starts_with("subnormal output: flushed") {
        return format!(
            "{fx} = {out}: the subnormal result was flushed to zero (flush-to-zero); the reference is {}{off}",
            shown(format, expected)
        );
    }
    format!(
        "{fx} = {out}; {}{off}{verdict}",
        expectation(format, expected, rule)
    )
}

/// What a rule expects, in words.
fn expectation(format: &dyn Format, expected: u32, rule: &str) -> String {
    let e = shown(format, expected);
    match rule {
        r if r.starts_with("NaN in") => "a NaN input must give a NaN".into(),
        r if r.starts_with("limit at") => format!("the limit is {e}"),
        "signed zero: f(-0) = -0" => format!("the function keeps the sign of zero, so f(-0) = {e}"),
        r if r.starts_with("signed zero: f(±0) is a zero") => {
            format!("the reference is {e} (a zero of either sign is accepted)")
        }
        "signed zero: f(-0) = f(0)" => format!("the reference is {e}, as at +0"),
        _ => format!("the reference is {e}"),
    }
}

/// Three decimals, trailing zeros dropped (whole numbers from 1000 on, with commas).
/// A figure with at most three decimals (thousands separated above 1000).
pub fn round3(x: f64) -> String {
    if (1000.0..1e18).contains(&x) {
        return count(x.round() as u64);
    }
    let t = format!("{x:.3}");
    let t = t.trim_end_matches('0').trim_end_matches('.');
    t.to_string()
}

/// A class name of a run ("nan", "+inf", "-inf", "finite") as a sentence writes it.
fn class_word(class: &str) -> &str {
    match class {
        "nan" => "NaN",
        other => other,
    }
}

/// Thousands separated by commas.
pub fn count(n: u64) -> String {
    let digits = n.to_string();
    let mut text = String::new();
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            text.push(',');
        }
        text.push(c);
    }
    text
}

/// A non-finite run: where, what the kernel gave and what the reference is there.
#[allow(clippy::too_many_arguments)]
pub fn run(
    format: &dyn Format,
    first: u32,
    last: u32,
    count_: u64,
    kernel: &str,
    reference: &str,
    exact_ends: bool,
    sampled: bool,
) -> String {
    let gave = if kernel == "finite" {
        "is finite".to_string()
    } else {
        format!("= {}", class_word(kernel))
    };
    let expected = match reference {
        "finite" => "the reference is finite there".to_string(),
        "nan" => "the reference is NaN there".to_string(),
        inf => format!("the reference overflows to {inf} there"),
    };
    let ends = match (exact_ends, sampled) {
        (true, false) => "",
        (true, true) => " (every input between them counted, sampled inside)",
        (false, _) => " (its ends known only to the sampled inputs)",
    };
    if first == last {
        return format!("{} {gave}; {expected}", call(format, first));
    }
    format!(
        "f(x) {gave} for the {} inputs from x = {} to {}{ends}; {expected}",
        count(count_),
        shown(format, first),
        shown(format, last)
    )
}

/// A threshold: where the reference reaches its asymptote (or overflows) for good and where
/// the kernel does.
#[allow(clippy::too_many_arguments)] // the fields of one threshold, as measured
pub fn threshold(
    input: &dyn Format,
    format: &dyn Format,
    overflow: bool,
    side: &str,
    asymptote: &BitsValue,
    reference: Option<&BitsValue>,
    kernel: Option<&BitsValue>,
    kernel_class: Option<&str>,
    steps: Option<i64>,
    searched: bool,
) -> String {
    let (kind, reaches) = if overflow {
        ("overflow", "overflows to".to_string())
    } else {
        ("saturation", "reaches".to_string())
    };
    let to = shown_of(format, asymptote);
    let at = |v: &BitsValue| format!("x = {}", shown_of(input, v));
    let side_words = if side == "+" { "x > 0" } else { "x < 0" };
    let reference_part = match reference {
        Some(r) => format!("the reference {reaches} {to} for good from {}", at(r)),
        None => format!("the reference never {reaches} {to}"),
    };
    let kernel_part = if !searched {
        "the kernel's threshold is not searched (its asymptote changes with g)".to_string()
    } else {
        match (kernel, steps) {
            (None, _) => format!(
                "the kernel never {}",
                if overflow { "overflows" } else { "stays there" }
            ),
            (Some(k), Some(0)) => format!("the kernel does so at the same input, {}", at(k)),
            (Some(k), Some(s)) => {
                format!(
                    "the kernel {}from {}, {} step{} {}",
                    returns(kernel_class),
                    at(k),
                    count(s.unsigned_abs()),
                    if s.unsigned_abs() == 1 { "" } else { "s" },
                    if s > 0 { "later" } else { "earlier" }
                )
            }
            (Some(k), None) => format!("the kernel {}from {}", returns(kernel_class), at(k)),
        }
    };
    format!("{kind} for {side_words}: {reference_part}; {kernel_part}")
}

/// "returns NaN " for a kernel whose output at its threshold is not finite, else nothing.
fn returns(class: Option<&str>) -> String {
    match class {
        Some(c) if c != "finite" => format!("returns {} ", class_word(c)),
        _ => String::new(),
    }
}

/// The words of a hygiene check's name.
fn hygiene_words(check: &str) -> &'static str {
    match check {
        "bounds" => "writes stay inside y[0..n)",
        "input-untouched" => "the input buffer is left unchanged",
        "tail" => "results do not depend on the batch length",
        "alignment" => "results do not depend on buffer alignment",
        "thread-safety" => "results do not change when called from several threads",
        "fp-environment" => "the floating-point environment is left unchanged",
        "in-place" => "results do not change when y is x",
        "determinism" => "the same input gives the same output on every call",
        "stride-gaps" => "nothing between or around y's strided elements is written",
        "stride-negative" => "negative strides give the contiguous results",
        "stride-broadcast" => "x stride 0 gives f(x[0]) in every y",
        "stride-equivalence" => "strided calls give the contiguous results",
        "stride-ragged" => "strided results do not depend on n",
        _ => "",
    }
}

/// A hygiene check: what it requires, and what happened (its detail, with every input and
/// output pattern given its value).
pub fn hygiene(format: &dyn Format, check: &str, passed: bool, detail: &str) -> String {
    let words = hygiene_words(check);
    let what = if words.is_empty() {
        format!("hygiene check {check}")
    } else {
        format!("hygiene check {check} ({words})")
    };
    if passed {
        return format!("{what}: passed");
    }
    format!("{what} failed: {}", with_values(format, detail))
}

/// Gives each bit pattern of the format named after "input", "gave", "but", "from", "to",
/// "at" or "got" its value: "gave 0x3f000001" → "gave 0.50000006 (0x3f000001)".
pub fn with_values(format: &dyn Format, text: &str) -> String {
    const BEFORE: [&str; 8] = [
        "input", "gave", "but", "from", "to", "at", "got", "returned",
    ];
    let digits = (format.width() / 4) as usize;
    let mut out = String::with_capacity(text.len() + 32);
    let mut previous = "";
    for (i, word) in text.split(' ').enumerate() {
        if i > 0 {
            out.push(' ');
        }
        let core = word.trim_end_matches([',', ';', ':', ')', '.']);
        let rest = &word[core.len()..];
        let is_pattern = core.len() == digits + 2
            && core.starts_with("0x")
            && core[2..].chars().all(|c| c.is_ascii_hexdigit());
        match crate::format::parse_hex(format, core) {
            Ok(bits) if is_pattern && BEFORE.contains(&previous) => {
                out.push_str(&shown(format, bits));
                out.push_str(rest);
            }
            _ => out.push_str(word),
        }
        previous = word;
    }
    out
}

/// An accuracy limit exceeded.
pub fn over_limit(max_ulp: f64, limit: f64) -> String {
    format!(
        "the largest error, {} ulp, exceeds the limit --max-ulp {}",
        round3(max_ulp),
        round3(limit)
    )
}

/// A fast reference that MPFR contradicted.
pub fn disagreement(format: &dyn Format, input: &BitsValue) -> String {
    format!(
        "the fast reference disagrees with MPFR at x = {} (rerun with --reference mpfr)",
        shown_of(format, input)
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::format::{Binary16, Binary32};

    #[test]
    fn values_read_back_as_their_pattern() {
        // binary16 0x2e66 is the nearest to 0.1 (numpy: np.float16(0.1).view(np.uint16) == 0x2e66).
        assert_eq!(value(&Binary16, 0x2e66), "0.1");
        // IEEE 754-2019 binary16 largest finite: 65504 = 0x7bff.
        assert_eq!(value(&Binary16, 0x7bff), "65504");
        assert_eq!(value(&Binary16, 0x8000), "-0");
        assert_eq!(value(&Binary16, 0xfc00), "-inf");
        assert_eq!(value(&Binary16, 0x7e00), "NaN");
        // Smallest binary16 subnormal 2^-24 = 5.960464477539063e-8 ("6e-8" identifies it).
        assert_eq!(value(&Binary16, 0x0001), "6e-8");
        // binary32 0.1f = 0x3dcccccd (common practice; numpy float32(0.1)).
        assert_eq!(value(&Binary32, 0x3dcccccd), "0.1");
        assert_eq!(value(&Binary32, 0x3f800001), "1.0000001");
        // Largest binary32 3.4028235e38 (numpy: np.finfo(np.float32).max prints 3.4028235e+38).
        assert_eq!(value(&Binary32, 0x7f7fffff), "3.4028235e38");
    }

    #[test]
    fn issue_examples() {
        let f = &Binary16;
        assert_eq!(
            special(
                f,
                f,
                0x7bff,
                Some(0x7e00),
                0x7bff,
                false,
                "special value",
                None,
                1.0
            ),
            "f(65504) = NaN (0x7e00); the reference is 65504 (0x7bff)"
        );
        assert_eq!(
            special(
                f,
                f,
                0xfc00,
                Some(0x7e00),
                0xbc00,
                false,
                "limit at -inf",
                None,
                1.0
            ),
            "f(-inf) = NaN (0x7e00); the limit is -1 (0xbc00)"
        );
        assert_eq!(
            special(
                f,
                f,
                0x8000,
                Some(0x0000),
                0x8000,
                false,
                "signed zero: f(-0) = -0",
                None,
                1.0
            ),
            "f(-0) = +0 (0x0000); the function keeps the sign of zero, so f(-0) = -0 (0x8000)"
        );
        assert_eq!(
            with_values(&Binary32, "position 17: input 0x33961616 gave 0x3f000001 but 0x3f000000 in the bulk run (MXCSR 0x1f80)"),
            "position 17: input 6.988937e-8 (0x33961616) gave 0.50000006 (0x3f000001) but 0.5 (0x3f000000) in the bulk run (MXCSR 0x1f80)"
        );
    }
}
