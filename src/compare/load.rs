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
    /// Format.
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

fn num(v: &Value, path: &str, what: &str) -> Result<f64, String> {
    get(v, path, what)?
        .as_f64()
        .ok_or_else(|| format!("{what}: key `{path}` is not a number"))
}

fn text(v: &Value) -> String {
    match v {
        Value::String(s) => s.clone(),
        other => other.to_string(),
    }
}

fn figures(v: &Value, what: &str) -> Result<Figures, String> {
    let params = match get(v, "params", what)? {
        Value::Object(m) => m
            .iter()
            .map(|(k, x)| format!("{k}={}", text(x)))
            .collect::<Vec<_>>()
            .join(", "),
        _ => return Err(format!("{what}: key `params` is not an object")),
    };
    let mut role = text(get(v, "role", what)?);
    if v.get("from_output").and_then(Value::as_bool) == Some(true) {
        role.push_str("-from-output");
    }
    let key = KernelKey {
        function: text(get(v, "function", what)?),
        params,
        format: text(get(v, "format", what)?),
        role,
        symbol: v
            .get("kernel")
            .and_then(|k| k.get("symbol"))
            .map(text)
            .unwrap_or_default(),
    };
    let list = |name: &str| -> Result<Vec<Value>, String> {
        get(v, name, what)?
            .as_array()
            .cloned()
            .ok_or_else(|| format!("{what}: key `{name}` is not a list"))
    };
    let runs = list("non_finite")?;
    let (non_finite_runs, non_finite_inputs) = match v.get("non_finite_total") {
        Some(total) => {
            let count = |key: &str| {
                total
                    .get(key)
                    .and_then(Value::as_u64)
                    .ok_or_else(|| format!("{what}: key `non_finite_total.{key}` is not a count"))
            };
            (count("runs")?, count("inputs")?)
        }
        None => (
            runs.len() as u64,
            runs.iter()
                .map(|r| r.get("count").and_then(Value::as_u64).unwrap_or(0))
                .sum(),
        ),
    };
    let hygiene = list("hygiene")?
        .iter()
        .map(|h| {
            (
                h.get("check").map(text).unwrap_or_default(),
                h.get("passed").and_then(Value::as_bool).unwrap_or(false),
            )
        })
        .collect();
    let special = list("special_values")?
        .iter()
        .map(|r| {
            let bits = r
                .get("input")
                .and_then(|i| i.get("bits"))
                .map(text)
                .unwrap_or_default();
            // "subnormal input: flushed to zero …" is the same rule as "subnormal input".
            let rule = r.get("rule").map(text).unwrap_or_default();
            let rule = match rule.split_once(':') {
                Some((head, _)) if !head.starts_with("signed zero") => head.to_string(),
                _ => rule,
            };
            (
                (bits, rule),
                r.get("passed").and_then(Value::as_bool).unwrap_or(false),
            )
        })
        .collect();
    let crash = match get(v, "crash", what)? {
        Value::Null => None,
        c => Some(format!(
            "{} at {}",
            c.get("signal").map(text).unwrap_or_default(),
            c.get("input")
                .and_then(|i| i.get("bits"))
                .map(text)
                .unwrap_or_default()
        )),
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
        max_ulp: num(v, "accuracy.max_ulp", what)?,
        mean_ulp: num(v, "accuracy.mean_ulp", what)?,
        correctly_rounded: num(v, "accuracy.correctly_rounded", what)?,
        faithful: num(v, "accuracy.faithful", what)?,
        points: num(v, "accuracy.points", what)? as u64,
        non_finite_inputs,
        non_finite_runs,
        hygiene,
        special,
        crash,
        ns_per_element: v
            .get("kernel")
            .and_then(|k| k.get("ns_per_element"))
            .and_then(Value::as_f64),
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
