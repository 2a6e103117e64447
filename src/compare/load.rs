//! Reading check reports (one kernel, a manifest run, or a certificate) into the figures
//! `compare` looks at.

use crate::certify::CERTIFICATE_SCHEMA;
use crate::report::model::SCHEMA;
use serde_json::Value;
use std::collections::BTreeMap;
use std::path::Path;

/// What identifies a kernel across builds: not its library path or hash.
#[derive(Clone, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub struct KernelKey {
    /// Catalog function.
    pub function: String,
    /// Parameters, "name=value" joined by ", ".
    pub params: String,
    /// Format ("bf16→f32" for a kernel that mixes formats, so the pair tells kernels apart).
    pub format: String,
    /// Role (with "-from-output" for gradients fed f(x)).
    pub role: String,
    /// Exported symbol.
    pub symbol: String,
}

impl std::fmt::Display for KernelKey {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "{} {} {} {}",
            self.symbol, self.function, self.role, self.format
        )?;
        if !self.params.is_empty() {
            write!(f, " ({})", self.params)?;
        }
        Ok(())
    }
}

/// The figures of one kernel.
#[derive(Clone, Debug)]
pub struct Figures {
    /// Identity.
    pub key: KernelKey,
    /// Largest ulp error.
    pub max_ulp: f64,
    /// Mean ulp error.
    pub mean_ulp: f64,
    /// Correctly rounded fraction.
    pub correctly_rounded: f64,
    /// Faithful fraction.
    pub faithful: f64,
    /// Points measured.
    pub points: u64,
    /// Inputs in non-finite runs.
    pub non_finite_inputs: u64,
    /// Non-finite runs.
    pub non_finite_runs: u64,
    /// Hygiene check → passed.
    pub hygiene: BTreeMap<String, bool>,
    /// (input bits, rule) → passed.
    pub special: BTreeMap<(String, String), bool>,
    /// Signal and input of the first crash.
    pub crash: Option<String>,
    /// Never judged: throughput.
    pub ns_per_element: Option<f64>,
    /// Never judged: library sha256.
    pub sha256: Option<String>,
    /// Never judged: compiler.
    pub compiler: Option<String>,
    /// Never judged: sweep in words (kinds, coverage, inputs).
    pub sweep: String,
}

/// Every kernel of a file, in file order, with the file's schema.
pub struct Loaded {
    /// The schema tag.
    pub schema: String,
    /// The kernels.
    pub kernels: Vec<Figures>,
}

fn get<'a>(v: &'a Value, path: &str, what: &str) -> Result<&'a Value, String> {
    let mut cur = v;
    for part in path.split('.') {
        cur = cur
            .get(part)
            .ok_or_else(|| format!("{what}: missing key `{path}`"))?;
    }
    Ok(cur)
}

/// A number at least 0 (JSON has no NaN or infinity, so it is finite too).
fn num(v: &Value, path: &str, what: &str) -> Result<f64, String> {
    get(v, path, what)?
        .as_f64()
        .filter(|x| *x >= 0.0)
        .ok_or_else(|| format!("{what}: key `{path}` is not a number >= 0"))
}

/// A fraction, from 0 to 1.
fn fraction(v: &Value, path: &str, what: &str) -> Result<f64, String> {
    get(v, path, what)?
        .as_f64()
        .filter(|x| (0.0..=1.0).contains(x))
        .ok_or_else(|| format!("{what}: key `{path}` is not a fraction from 0 to 1"))
}

/// A count: a whole number at least 0.
fn count(v: &Value, path: &str, what: &str) -> Result<u64, String> {
    get(v, path, what)?
        .as_u64()
        .ok_or_else(|| format!("{what}: key `{path}` is not a whole number >= 0"))
}

fn string(v: &Value, path: &str, what: &str) -> Result<String, String> {
    get(v, path, what)?
        .as_str()
        .map(String::from)
        .ok_or_else(|| format!("{what}: key `{path}` is not a string"))
}

fn boolean(v: &Value, path: &str, what: &str) -> Result<bool, String> {
    get(v, path, what)?
        .as_bool()
        .ok_or_else(|| format!("{what}: key `{path}` is not true or false"))
}

/// Null, or a string.
fn optional_string(v: &Value, path: &str, what: &str) -> Result<Option<String>, String> {
    match v.get(path) {
        None | Some(Value::Null) => Ok(None),
        Some(Value::String(s)) => Ok(Some(s.clone())),
        Some(_) => Err(format!("{what}: key `{path}` is not a string or null")),
    }
}

fn text(v: &Value) -> String {
    match v {
        Value::String(s) => s.clone(),
        other => other.to_string(),
    }
}

/// The entries of a list, each an object, with the name an error gives each.
fn list<'a>(v: &'a Value, name: &str, what: &str) -> Result<Vec<(String, &'a Value)>, String> {
    let items = get(v, name, what)?
        .as_array()
        .ok_or_else(|| format!("{what}: key `{name}` is not a list"))?;
    items
        .iter()
        .enumerate()
        .map(|(i, item)| {
            let at = format!("{what}: {name}[{i}]");
            if item.is_object() {
                Ok((at, item))
            } else {
                Err(format!("{at} is not an object"))
            }
        })
        .collect()
}

/// Every judged figure must be present and well formed: a field read as 0 or as "passed" by
/// default could make a regression look like an improvement.
fn figures(v: &Value, what: &str) -> Result<Figures, String> {
    if !v.is_object() {
        return Err(format!("{what} is not an object"));
    }
    let params = match get(v, "params", what)? {
        Value::Object(m) => m
            .iter()
            .map(|(k, x)| format!("{k}={}", text(x)))
            .collect::<Vec<_>>()
            .join(", "),
        _ => return Err(format!("{what}: key `params` is not an object")),
    };
    let mut role = string(v, "role", what)?;
    match v.get("from_output") {
        None | Some(Value::Bool(false)) => {}
        Some(Value::Bool(true)) => role.push_str("-from-output"),
        Some(_) => return Err(format!("{what}: key `from_output` is not true or false")),
    }
    let symbol = match v.get("kernel") {
        None => String::new(),
        Some(k @ Value::Object(_)) => {
            optional_string(k, "symbol", &format!("{what}: kernel"))?.unwrap_or_default()
        }
        Some(_) => return Err(format!("{what}: key `kernel` is not an object")),
    };
    let output = string(v, "format", what)?;
    let format = match optional_string(v, "input_format", what)? {
        Some(input) if input != output => format!("{input}→{output}"),
        _ => output,
    };
    let key = KernelKey {
        function: string(v, "function", what)?,
        params,
        format,
        role,
        symbol,
    };
    // Version 2 lists the longest runs and counts them all in `non_finite_total`; version 1
    // listed every run. Either way the listed runs must be well formed and within the totals.
    let runs = list(v, "non_finite", what)?;
    let mut listed_inputs = 0u64;
    for (at, run) in &runs {
        let n = count(run, "count", at)?;
        if n == 0 {
            return Err(format!(
                "{at}: key `count` is 0: a run holds at least one input"
            ));
        }
        listed_inputs = listed_inputs
            .checked_add(n)
            .ok_or_else(|| format!("{what}: the non-finite runs hold more than 2^64 inputs"))?;
    }
    let (non_finite_runs, non_finite_inputs) = match v.get("non_finite_total") {
        Some(total) => {
            let runs_total = count(total, "runs", &format!("{what}: non_finite_total"))?;
            let inputs = count(total, "inputs", &format!("{what}: non_finite_total"))?;
            if runs_total < runs.len() as u64 || inputs < listed_inputs || inputs < runs_total {
                return Err(format!(
                    "{what}: non_finite_total ({runs_total} runs, {inputs} inputs) is less than the runs listed ({} runs, {listed_inputs} inputs)",
                    runs.len()
                ));
            }
            (runs_total, inputs)
        }
        None => (runs.len() as u64, listed_inputs),
    };
    let mut hygiene = BTreeMap::new();
    for (at, h) in list(v, "hygiene", what)? {
        let check = string(h, "check", &at)?;
        if hygiene
            .insert(check.clone(), boolean(h, "passed", &at)?)
            .is_some()
        {
            return Err(format!("{what}: hygiene check `{check}` is listed twice"));
        }
    }
    let mut special = BTreeMap::new();
    for (at, r) in list(v, "special_values", what)? {
        let bits = string(r, "input.bits", &at)?;
        // "subnormal input: flushed to zero …" is the same rule as "subnormal input".
        let rule = string(r, "rule", &at)?;
        let rule = match rule.split_once(':') {
            Some((head, _)) if !head.starts_with("signed zero") => head.to_string(),
            _ => rule,
        };
        let passed = boolean(r, "passed", &at)?;
        // One rule at one input twice: failing wins, so a duplicate cannot hide a failure.
        let entry = special.entry((bits, rule)).or_insert(passed);
        *entry &= passed;
    }
    let crash = match get(v, "crash", what)? {
        Value::Null => None,
        c @ Value::Object(_) => {
            let at = format!("{what}: crash");
            count(c, "count", &at)?;
            Some(format!(
                "{} at {}",
                string(c, "signal", &at)?,
                string(c, "input.bits", &at)?
            ))
        }
        _ => return Err(format!("{what}: key `crash` is not an object or null")),
    };
    let max_ulp = num(v, "accuracy.max_ulp", what)?;
    let mean_ulp = num(v, "accuracy.mean_ulp", what)?;
    if mean_ulp > max_ulp {
        return Err(format!(
            "{what}: accuracy.mean_ulp {mean_ulp} exceeds accuracy.max_ulp {max_ulp}"
        ));
    }
    let correctly_rounded = fraction(v, "accuracy.correctly_rounded", what)?;
    let faithful = fraction(v, "accuracy.faithful", what)?;
    // A correctly rounded result is one of the two faithful ones.
    if correctly_rounded > faithful {
        return Err(format!(
            "{what}: accuracy.correctly_rounded {correctly_rounded} exceeds accuracy.faithful {faithful}"
        ));
    }
    let points = count(v, "accuracy.points", what)?;
    let ns_per_element = match v.get("kernel").and_then(|k| k.get("ns_per_element")) {
        None | Some(Value::Null) => None,
        Some(x) => Some(x.as_f64().filter(|x| *x >= 0.0).ok_or_else(|| {
            format!("{what}: key `kernel.ns_per_element` is not a number >= 0 or null")
        })?),
    };
    let library = v.get("provenance").and_then(|p| p.get("library"));
    let sweep = v.get("sweep").map_or(String::new(), |s| {
        format!(
            "{} {} over {}, {} inputs",
            s.get("coverage").map(text).unwrap_or_default(),
            s.get("kinds")
                .and_then(Value::as_array)
                .map(|k| k.iter().map(text).collect::<Vec<_>>().join("+"))
                .unwrap_or_default(),
            s.get("range").map(text).unwrap_or_default(),
            s.get("inputs").map(text).unwrap_or_default()
        )
    });
    Ok(Figures {
        key,
        max_ulp,
        mean_ulp,
        correctly_rounded,
        faithful,
        points,
        non_finite_inputs,
        non_finite_runs,
        hygiene,
        special,
        crash,
        ns_per_element,
        sha256: library
            .and_then(|l| l.get("sha256"))
            .and_then(Value::as_str)
            .map(String::from),
        compiler: library
            .and_then(|l| l.get("compiler"))
            .and_then(Value::as_str)
            .map(String::from),
        sweep,
    })
}

/// Reads a report file; `role` ("baseline"/"candidate") prefixes every error.
pub fn load(path: &Path, role: &str) -> Result<Loaded, String> {
    // User text quoted in a message stays on the message's one line.
    load_inner(path, role).map_err(|e| e.replace('\n', "\\n").replace('\r', "\\r"))
}

/// [`load`], before newlines in quoted text are escaped.
fn load_inner(path: &Path, role: &str) -> Result<Loaded, String> {
    let what = format!("{role} {}", path.display());
    let bytes = std::fs::read(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => format!("{what}: no such file"),
        _ => format!("{what}: cannot read: {e}"),
    })?;
    let v: Value =
        serde_json::from_slice(&bytes).map_err(|e| format!("{what}: not a JSON report: {e}"))?;
    let schema = v
        .get("schema")
        .and_then(Value::as_str)
        .ok_or_else(|| format!("{what}: no `schema` key: not an ulpgauge report"))?
        .to_string();
    // A certificate carries its check report; compare that.
    let (schema, body) = if schema == CERTIFICATE_SCHEMA {
        let check = get(&v, "check", &what)?.clone();
        let s = check
            .get("schema")
            .and_then(Value::as_str)
            .unwrap_or("")
            .to_string();
        (s, check)
    } else {
        (schema, v)
    };
    // Version 1 listed every non-finite run; version 2 lists the longest and counts them all.
    // Both carry the figures compared, so a baseline of either version compares.
    if schema != SCHEMA && schema != "ulpgauge-check/1" {
        return Ok(Loaded {
            schema,
            kernels: Vec::new(),
        });
    }
    let schema = SCHEMA.to_string();
    let kernels = match body.get("kernels") {
        Some(Value::Array(list)) if list.is_empty() => {
            return Err(format!("{what}: key `kernels` lists no kernel"))
        }
        Some(Value::Array(list)) => list
            .iter()
            .enumerate()
            .map(|(i, k)| figures(k, &format!("{what}: kernels[{i}]")))
            .collect::<Result<Vec<_>, _>>()?,
        Some(_) => return Err(format!("{what}: key `kernels` is not a list")),
        None => vec![figures(&body, &what)?],
    };
    Ok(Loaded { schema, kernels })
}
