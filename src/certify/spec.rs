//! The certify spec: a TOML file naming one kernel, the sweep and the requirements it must meet.
//!
//! ```toml
//! [kernel]
//! library = "build/liblumen_edge.so"   # relative to the spec file
//! symbol = "lumen_elu_f32"
//! function = "elu"
//! format = "f32"                       # f32 | f16 | bf16 | e4m3 | e5m2; or both of:
//! # input_format = "bf16"              #   a kernel that reads one format
//! # output_format = "f32"              #   and writes another (see check --input-format)
//! role = "forward"                     # forward | derivative | gradient | gradient-from-output
//! params = { alpha = "0.5" }           # exact decimals (strings keep every digit)
//! param_passing = "trailing"           # baked (default) | trailing
//! param_rounding = "exact"             # exact (default) | f32 | format
//! in_place = false                     # default false
//! thread_safe = true                   # default true
//! signature = "strided"                # contiguous (default) | strided: (x, sx, y, sy, n)
//! strides = [2, -1]                    # strided: the sweep's SX,SY (default [1, 1]; or "2,-1")
//! timeout = 10.0                       # seconds per batch before the kernel counts as hung
//! memory = "4G"                        # address space of the worker (check's --kernel-memory)
//!
//! [sweep]                              # optional; defaults are `check`'s
//! kind = ["dense", "edge"]             # or one string: exhaustive | dense | edge | random
//! range = "-8,8"                       # or [-8, 8]; LO included, HI excluded
//! points = 256                         # random samples; for dense, significands per binade
//! seed = 1
//! neighbours = 16
//! random_mode = "bits"                 # bits | values
//!
//! [require]                            # only what is listed is judged
//! max_ulp = 1.0
//! mean_ulp = 0.1
//! correctly_rounded = 0.99             # smallest fraction of correctly rounded points
//! faithful = true                      # every point within 1 ulp
//! nan_propagation = true               # NaN in -> NaN out
//! signed_zero = true
//! limits = true                        # the limits at ±inf (of f′ for derivative kernels)
//! no_spurious_overflow = true          # no non-finite output where the reference is finite
//! monotone = true                      # forward kernels of monotone functions
//! hygiene = true                       # all six checks (and the five stride-* checks of a
//!                                      # strided kernel), or a list: ["tail", "bounds"]
//! kinks = "either"                     # derivative/gradient kernels: left | right | either
//! same_verdict_in = "ftz,daz"          # every requirement judged the same in this caller FP
//!                                      # environment (as `check --caller-fpenv`) as by default
//! [[require.range]]                    # per-range limits, each measured by its own sweep
//! range = "-1,1"
//! max_ulp = 0.5
//! ```
//!
//! Every error is one line naming the spec file and the key.

use crate::activation::{lookup, Constants, Entry};
use crate::format::Format;
use crate::kernel::hygiene::{CHECKS, STRIDED_CHECKS};
use crate::kernel::{KernelRole, ParamPassing};
use crate::reference::ParamRounding;
use crate::sweep::{InputRange, SampleMode, SweepKind};
use serde::Deserialize;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct File {
    kernel: KernelTable,
    #[serde(default)]
    sweep: SweepTable,
    require: RequireTable,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct KernelTable {
    library: String,
    symbol: String,
    function: String,
    format: Option<String>,
    input_format: Option<String>,
    output_format: Option<String>,
    role: Option<String>,
    #[serde(default)]
    params: BTreeMap<String, Number>,
    param_passing: Option<String>,
    param_rounding: Option<String>,
    #[serde(default)]
    in_place: bool,
    thread_safe: Option<bool>,
    signature: Option<String>,
    strides: Option<crate::kernel::stride::StridesValue>,
    timeout: Option<f64>,
    memory: Option<String>,
}

#[derive(Deserialize, Default)]
#[serde(deny_unknown_fields)]
struct SweepTable {
    kind: Option<OneOrMany>,
    range: Option<RangeValue>,
    points: Option<i64>,
    per_binade: Option<i64>,
    seed: Option<i64>,
    neighbours: Option<i64>,
    random_mode: Option<String>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RequireTable {
    max_ulp: Option<f64>,
    mean_ulp: Option<f64>,
    correctly_rounded: Option<f64>,
    faithful: Option<bool>,
    nan_propagation: Option<bool>,
    signed_zero: Option<bool>,
    limits: Option<bool>,
    no_spurious_overflow: Option<bool>,
    monotone: Option<bool>,
    hygiene: Option<HygieneValue>,
    kinks: Option<String>,
    same_verdict_in: Option<String>,
    #[serde(default)]
    range: Vec<RangeTable>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RangeTable {
    range: RangeValue,
    max_ulp: f64,
}

#[derive(Deserialize)]
#[serde(untagged)]
enum OneOrMany {
    One(String),
    Many(Vec<String>),
}

#[derive(Deserialize)]
#[serde(untagged)]
enum HygieneValue {
    All(bool),
    Some(Vec<String>),
}

#[derive(Deserialize)]
#[serde(untagged)]
enum RangeValue {
    Text(String),
    Pair(Vec<Number>),
}

/// A number as TOML gives it: a string keeps the exact decimal.
#[derive(Deserialize)]
#[serde(untagged)]
enum Number {
    Text(String),
    Integer(i64),
    Float(f64),
}

impl Number {
    fn text(&self) -> String {
        match self {
            Number::Text(s) => s.trim().to_string(),
            Number::Integer(i) => i.to_string(),
            // Shortest round-trip spelling; infinities as the range syntax spells them.
            Number::Float(f) if f.is_infinite() => if *f > 0.0 { "inf" } else { "-inf" }.into(),
            Number::Float(f) => f.to_string(),
        }
    }
}

impl RangeValue {
    fn text(&self, key: &str) -> Result<String, String> {
        match self {
            RangeValue::Text(t) => Ok(t.clone()),
            RangeValue::Pair(v) if v.len() == 2 => Ok(format!("{},{}", v[0].text(), v[1].text())),
            RangeValue::Pair(v) => Err(format!(
                "key `{key}`: a range is \"LO,HI\" or [LO, HI], got {} numbers",
                v.len()
            )),
        }
    }
}

/// Which side a derivative kernel must use at a kink.
#[derive(Clone, Copy, Debug, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum KinkSide {
    /// The left-hand derivative.
    Left,
    /// The right-hand derivative.
    Right,
    /// Either one-sided derivative.
    Either,
}

/// A per-range limit.
#[derive(Clone, Debug)]
pub struct RangeLimit {
    /// The range as written ("LO,HI").
    pub text: String,
    /// Its inputs.
    pub range: InputRange,
    /// Largest ulp error allowed inside.
    pub max_ulp: f64,
}

/// The requirements a spec lists; `None` (or false) is not judged.
#[derive(Clone, Debug, Default)]
pub struct Requirements {
    /// Largest ulp error.
    pub max_ulp: Option<f64>,
    /// Largest mean ulp error.
    pub mean_ulp: Option<f64>,
    /// Smallest correctly rounded fraction.
    pub correctly_rounded: Option<f64>,
    /// Every point within 1 ulp.
    pub faithful: bool,
    /// NaN in → NaN out.
    pub nan_propagation: bool,
    /// Signed-zero rules.
    pub signed_zero: bool,
    /// Limits at ±∞.
    pub limits: bool,
    /// No non-finite output where the reference is finite.
    pub no_spurious_overflow: bool,
    /// No monotonicity violations.
    pub monotone: bool,
    /// Hygiene checks that must pass.
    pub hygiene: Vec<&'static str>,
    /// Side used at kinks.
    pub kinks: Option<KinkSide>,
    /// Per-range limits.
    pub ranges: Vec<RangeLimit>,
    /// A caller's FP environment ("ftz,daz") in which every other requirement must be judged
    /// as it is in the default environment.
    pub same_verdict_in: Option<String>,
}

/// The sweep a spec asks for, as `check` options.
#[derive(Clone, Debug, Default)]
pub struct SweepOptions {
    /// Kinds (empty: check's default).
    pub kinds: Vec<SweepKind>,
    /// "LO,HI".
    pub range: Option<String>,
    /// --points.
    pub points: Option<u64>,
    /// --per-binade.
    pub per_binade: Option<u32>,
    /// --seed.
    pub seed: Option<u64>,
    /// --neighbours.
    pub neighbours: Option<u32>,
    /// --random-mode.
    pub random_mode: Option<SampleMode>,
}

/// A validated spec.
#[derive(Clone)]
pub struct Spec {
    /// The spec file.
    pub path: PathBuf,
    /// SHA-256 of the spec file.
    pub sha256: String,
    /// Library, resolved against the spec's folder.
    pub library: PathBuf,
    /// Symbol.
    pub symbol: String,
    /// Catalog function.
    pub function: Entry,
    /// Format of the outputs (and of the inputs unless `input_format` differs).
    pub format: &'static dyn Format,
    /// Format of the inputs (and of a gradient's g); `format` unless the kernel mixes formats.
    pub input_format: &'static dyn Format,
    /// Role.
    pub role: KernelRole,
    /// (NAME, exact decimal).
    pub params: Vec<(String, String)>,
    /// Baked or trailing.
    pub param_passing: ParamPassing,
    /// How parameters enter the reference.
    pub param_rounding: ParamRounding,
    /// y == x allowed.
    pub in_place: bool,
    /// Concurrent calls allowed.
    pub thread_safe: bool,
    /// Contiguous or strided, with the sweep's strides.
    pub signature: crate::kernel::Signature,
    /// Seconds per batch.
    pub timeout: f64,
    /// Address space of the worker, in bytes.
    pub kernel_memory: u64,
    /// The sweep.
    pub sweep: SweepOptions,
    /// The requirements.
    pub require: Requirements,
}

/// The dotted key of the TOML entry at a byte offset: the last `[table]` header above it and
/// the key on its line.
fn key_at(text: &str, offset: usize) -> Option<String> {
    let offset = offset.min(text.len());
    let line_start = text[..offset].rfind('\n').map_or(0, |i| i + 1);
    let line = text[line_start..].lines().next().unwrap_or("");
    let table = text[..line_start]
        .lines()
        .rev()
        .map(str::trim)
        .find(|l| l.starts_with('['))
        .map(|l| l.trim_matches(|c| c == '[' || c == ']').trim().to_string());
    let key = line
        .split_once('=')
        .map(|(k, _)| k.trim().to_string())
        .filter(|k| !k.is_empty() && !k.starts_with('['));
    match (table, key) {
        (Some(t), Some(k)) => Some(format!("{t}.{k}")),
        (None, Some(k)) => Some(k),
        (Some(t), None) => Some(t),
        (None, None) => None,
    }
}

fn positive_int<T: TryFrom<i64>>(v: Option<i64>, key: &str, min: i64) -> Result<Option<T>, String> {
    match v {
        None => Ok(None),
        Some(n) if n < min => Err(format!("key `{key}`: must be at least {min}, got {n}")),
        Some(n) => T::try_from(n)
            .map(Some)
            .map_err(|_| format!("key `{key}`: {n} is too large")),
    }
}

fn limit(v: Option<f64>, key: &str) -> Result<Option<f64>, String> {
    match v {
        Some(x) if !x.is_finite() || x < 0.0 => Err(format!(
            "key `{key}`: must be a finite number of ulps >= 0, got {x}"
        )),
        v => Ok(v),
    }
}

fn kind(name: &str) -> Result<SweepKind, String> {
    match name {
        "exhaustive" => Ok(SweepKind::Exhaustive),
        "dense" => Ok(SweepKind::Dense),
        "edge" => Ok(SweepKind::Edge),
        "random" => Ok(SweepKind::Random),
        other => Err(format!(
            "key `sweep.kind`: unknown sweep kind '{other}' (known: exhaustive, dense, edge, random)"
        )),
    }
}

/// Reads and validates a spec; every error names the key (the caller adds the file name).
pub fn load(path: &Path) -> Result<Spec, String> {
    // User text quoted in a message stays on the message's one line.
    load_inner(path).map_err(|e| e.replace('\n', "\\n").replace('\r', "\\r"))
}

/// [`load`], before newlines in quoted text are escaped.
fn load_inner(path: &Path) -> Result<Spec, String> {
    let bytes = std::fs::read(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => "no such file".to_string(),
        _ => format!("cannot read: {e}"),
    })?;
    let text = String::from_utf8(bytes.clone()).map_err(|_| "not UTF-8 text".to_string())?;
    let file: File = toml::from_str(&text).map_err(|e| {
        let message = e.message().split_whitespace().collect::<Vec<_>>().join(" ");
        match e.span() {
            Some(span) => {
                let line = text[..span.start.min(text.len())].matches('\n').count() + 1;
                match key_at(&text, span.start) {
                    Some(key) => format!("line {line}: key `{key}`: {message}"),
                    None => format!("line {line}: {message}"),
                }
            }
            None => message,
        }
    })?;
    use sha2::{Digest, Sha256};
    let sha256 = Sha256::digest(&bytes)
        .iter()
        .map(|x| format!("{x:02x}"))
        .collect();
    let k = &file.kernel;
    let function = lookup(&k.function).ok_or_else(|| {
        let names: Vec<_> = crate::activation::catalog()
            .iter()
            .map(|f| f.name())
            .collect();
        format!(
            "key `kernel.function`: unknown function '{}' (known: {})",
            k.function,
            names.join(", ")
        )
    })?;
    let (key, name, input_name) = match (&k.format, &k.input_format, &k.output_format) {
        (Some(f), None, None) => ("kernel.format", f, None),
        (None, Some(i), Some(o)) => ("kernel.output_format", o, Some(i)),
        (Some(_), _, _) => {
            return Err(
                "key `kernel.format`: give `format` or both `input_format` and `output_format`, not both"
                    .into(),
            )
        }
        (None, None, None) => {
            return Err("key `kernel.format`: missing (or `input_format` and `output_format`)".into())
        }
        (None, _, _) => {
            return Err(
                "key `kernel.input_format`: needs both `input_format` and `output_format` (or `format`)"
                    .into(),
            )
        }
    };
    let known = |key: &str, name: &str| {
        crate::format::by_name(name).ok_or_else(|| {
            format!(
                "key `{key}`: unknown format '{name}' (known: {})",
                crate::format::KNOWN
            )
        })
    };
    let format = known(key, name)?;
    // An input is a bit pattern, not a rounding: a `-sat` suffix means nothing there.
    let input_format = match input_name {
        None => format,
        Some(i) => {
            let base = i.strip_suffix("-sat").unwrap_or(i);
            let f = known("kernel.input_format", base)?;
            if f.name() == format.name() {
                format
            } else {
                f
            }
        }
    };
    if input_format.name() != format.name() && k.in_place {
        return Err("key `kernel.in_place`: y == x needs equal input and output formats".into());
    }
    if k.symbol.trim().is_empty() {
        return Err("key `kernel.symbol`: empty".into());
    }
    if k.library.trim().is_empty() {
        return Err("key `kernel.library`: empty".into());
    }
    let role = match k.role.as_deref() {
        None | Some("forward") => KernelRole::Forward,
        Some("derivative") => KernelRole::Derivative,
        Some("gradient") => KernelRole::Gradient { from_output: false },
        Some("gradient-from-output") => {
            let allowed = crate::kernel::manifest::FROM_OUTPUT_FUNCTIONS;
            if !allowed.contains(&function.name()) {
                return Err(format!(
                    "key `kernel.role`: gradient-from-output is supported for {} only",
                    allowed.join(", ")
                ));
            }
            KernelRole::Gradient { from_output: true }
        }
        Some(other) => {
            return Err(format!(
                "key `kernel.role`: unknown role '{other}' (known: forward, derivative, gradient, gradient-from-output)"
            ))
        }
    };
    let mut params = Vec::new();
    for (name, value) in &k.params {
        let v = value.text();
        Constants::parse_params(function, &[format!("{name}={v}")])
            .map_err(|e| format!("key `kernel.params.{name}`: {e}"))?;
        params.push((name.clone(), v));
    }
    let param_passing = match k.param_passing.as_deref() {
        None | Some("baked") => ParamPassing::Baked,
        Some("trailing") if function.params().is_empty() => {
            return Err(format!(
                "key `kernel.param_passing`: {} has no parameters to pass",
                function.name()
            ))
        }
        Some("trailing") => ParamPassing::Trailing,
        Some(other) => {
            return Err(format!(
                "key `kernel.param_passing`: unknown value '{other}' (known: baked, trailing)"
            ))
        }
    };
    let signature = crate::kernel::Signature::parse(
        k.signature.as_deref().unwrap_or("contiguous"),
        k.strides.as_ref().map(|s| s.text()).as_deref(),
    )
    .map_err(|e| {
        let key = if k.strides.is_some() && !e.starts_with("unknown signature") {
            "kernel.strides"
        } else {
            "kernel.signature"
        };
        format!("key `{key}`: {e}")
    })?;
    if signature != crate::kernel::Signature::Contiguous && role.takes_gradient() {
        return Err(
            "key `kernel.signature`: the strided signature takes forward and derivative kernels only"
                .into(),
        );
    }
    let param_rounding = match k.param_rounding.as_deref() {
        None | Some("exact") => ParamRounding::Exact,
        Some("f32") => ParamRounding::F32,
        Some("format") => ParamRounding::Format,
        Some(other) => {
            return Err(format!(
                "key `kernel.param_rounding`: unknown value '{other}' (known: exact, f32, format)"
            ))
        }
    };
    let parsed = params
        .iter()
        .map(|(name, v)| Constants::parse_params(function, &[format!("{name}={v}")]))
        .collect::<Result<Vec<_>, String>>()?
        .concat();
    Constants::resolve_checked(function, &parsed, param_rounding, format)
        .map_err(|e| format!("key `kernel.params`: {e}"))?;
    let timeout = k.timeout.unwrap_or(10.0);
    crate::kernel::batch_timeout(timeout, "key `kernel.timeout`")?;
    let kernel_memory = match &k.memory {
        Some(text) => crate::kernel::kernel_memory(text, "key `kernel.memory`")?,
        None => crate::kernel::DEFAULT_KERNEL_MEMORY,
    };
    let dir = path.parent().map(Path::to_path_buf).unwrap_or_default();
    let library = {
        let p = PathBuf::from(&k.library);
        if p.is_absolute() {
            p
        } else {
            dir.join(p)
        }
    };

    let s = &file.sweep;
    let kinds = match &s.kind {
        None => Vec::new(),
        Some(OneOrMany::One(name)) => vec![kind(name)?],
        Some(OneOrMany::Many(names)) if names.is_empty() => {
            return Err("key `sweep.kind`: empty list".into())
        }
        Some(OneOrMany::Many(names)) => names.iter().map(|n| kind(n)).collect::<Result<_, _>>()?,
    };
    let range = match &s.range {
        Some(r) => {
            let t = r.text("sweep.range")?;
            InputRange::parse(input_format, &t)
                .map_err(|e| format!("key `sweep.range`: {}", e.replace("--range ", "")))?;
            Some(t)
        }
        None => None,
    };
    let random_mode = match s.random_mode.as_deref() {
        None => None,
        Some("bits") => Some(SampleMode::Bits),
        Some("values") => Some(SampleMode::Values),
        Some(other) => {
            return Err(format!(
                "key `sweep.random_mode`: unknown value '{other}' (known: bits, values)"
            ))
        }
    };
    let sweep = SweepOptions {
        kinds,
        range,
        points: positive_int(s.points, "sweep.points", 1)?,
        per_binade: positive_int(s.per_binade, "sweep.per_binade", 2)?,
        seed: positive_int(s.seed, "sweep.seed", 0)?,
        neighbours: positive_int(s.neighbours, "sweep.neighbours", 0)?,
        random_mode,
    };

    let r = &file.require;
    let forward = role == KernelRole::Forward;
    if r.monotone == Some(true) {
        if !forward {
            return Err("key `require.monotone`: applies to forward kernels only".into());
        }
        if !function.facts().monotone {
            return Err(format!(
                "key `require.monotone`: {} is not monotone, so its kernel need not be",
                function.name()
            ));
        }
    }
    let hygiene = match &r.hygiene {
        None | Some(HygieneValue::All(false)) => Vec::new(),
        Some(HygieneValue::All(true)) => match signature {
            crate::kernel::Signature::Contiguous => CHECKS.to_vec(),
            _ => CHECKS.iter().chain(&STRIDED_CHECKS).copied().collect(),
        },
        Some(HygieneValue::Some(names)) => {
            let mut v = Vec::new();
            let known: Vec<&'static str> = CHECKS.iter().chain(&STRIDED_CHECKS).copied().collect();
            for n in names {
                let c = known.iter().find(|c| **c == n.as_str()).ok_or_else(|| {
                    format!(
                        "key `require.hygiene`: unknown check '{n}' (known: {})",
                        known.join(", ")
                    )
                })?;
                v.push(*c);
            }
            if v.is_empty() {
                return Err("key `require.hygiene`: empty list (use false to skip)".into());
            }
            v
        }
    };
    let kinks = match r.kinks.as_deref() {
        None => None,
        Some(side) => {
            if forward {
                return Err(
                    "key `require.kinks`: applies to derivative and gradient kernels only".into(),
                );
            }
            let c = Constants::resolve(function, &[], param_rounding, format);
            if function.kinks(&c).is_empty() {
                return Err(format!(
                    "key `require.kinks`: {} has no kinks",
                    function.name()
                ));
            }
            Some(match side {
                "left" => KinkSide::Left,
                "right" => KinkSide::Right,
                "either" => KinkSide::Either,
                other => {
                    return Err(format!(
                        "key `require.kinks`: unknown side '{other}' (known: left, right, either)"
                    ))
                }
            })
        }
    };
    let correctly_rounded = match r.correctly_rounded {
        Some(f) if !(0.0..=1.0).contains(&f) => {
            return Err(format!(
                "key `require.correctly_rounded`: a fraction from 0 to 1, got {f}"
            ))
        }
        f => f,
    };
    let mut ranges = Vec::new();
    for (i, entry) in r.range.iter().enumerate() {
        let key = format!("require.range[{i}].range");
        let t = entry.range.text(&key)?;
        let range = InputRange::parse(input_format, &t)
            .map_err(|e| format!("key `{key}`: {}", e.replace("--range ", "")))?;
        let max_ulp =
            limit(Some(entry.max_ulp), &format!("require.range[{i}].max_ulp"))?.expect("set");
        ranges.push(RangeLimit {
            text: t,
            range,
            max_ulp,
        });
    }
    let require = Requirements {
        max_ulp: limit(r.max_ulp, "require.max_ulp")?,
        mean_ulp: limit(r.mean_ulp, "require.mean_ulp")?,
        correctly_rounded,
        faithful: r.faithful == Some(true),
        nan_propagation: r.nan_propagation == Some(true),
        signed_zero: r.signed_zero == Some(true),
        limits: r.limits == Some(true),
        no_spurious_overflow: r.no_spurious_overflow == Some(true),
        monotone: r.monotone == Some(true),
        hygiene,
        kinks,
        ranges,
        same_verdict_in: match &r.same_verdict_in {
            Some(list) => {
                crate::kernel::fpenv::caller_word(0, list)
                    .map_err(|e| format!("key `require.same_verdict_in`: {e}"))?;
                Some(list.clone())
            }
            None => None,
        },
    };
    if require.is_empty() {
        return Err("key `require`: lists no requirement (e.g. max_ulp = 1.0)".into());
    }
    Ok(Spec {
        path: path.to_path_buf(),
        sha256,
        library,
        symbol: k.symbol.clone(),
        function,
        format,
        input_format,
        role,
        params,
        param_passing,
        param_rounding,
        in_place: k.in_place,
        thread_safe: k.thread_safe.unwrap_or(true),
        signature,
        timeout,
        kernel_memory,
        sweep,
        require,
    })
}

impl Requirements {
    /// Whether nothing is required.
    pub fn is_empty(&self) -> bool {
        self.max_ulp.is_none()
            && self.mean_ulp.is_none()
            && self.correctly_rounded.is_none()
            && !self.faithful
            && !self.nan_propagation
            && !self.signed_zero
            && !self.limits
            && !self.no_spurious_overflow
            && !self.monotone
            && self.hygiene.is_empty()
            && self.kinks.is_none()
            && self.ranges.is_empty()
            && self.same_verdict_in.is_none()
    }
}
