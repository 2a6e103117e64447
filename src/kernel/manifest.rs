//! The kernel manifest: a TOML file listing the kernels of one or more libraries.
//!
//! ```toml
//! library = "build/liblumen_edge.so"   # relative to the manifest; a kernel may override it
//!
//! [[kernel]]
//! symbol = "lumen_elu_f32"
//! function = "elu"
//! format = "f32"                       # or input-format = "bf16" with output-format = "f32"
//! role = "forward"                     # forward | derivative | gradient | gradient-from-output
//! params = { alpha = "1.0" }           # exact decimals; strings keep every digit
//! param-passing = "trailing"           # baked (default) | trailing
//! in-place = false                     # default false
//! thread-safe = true                   # default true
//! signature = "strided"                # contiguous (default) | strided: (x, sx, y, sy, n)
//! strides = [2, -1]                    # strided: the sweep's element strides (default [1, 1])
//! caller-fpenv = "ftz,daz"             # run also in the caller's FP environment (see check)
//! variants = ["lumen_elu_f32_avx2", "lumen_elu_f32_sse2"]   # instead of `symbol`: dispatch
//!                                      # variants of one kernel, each measured and compared
//!
//! [[kernel]]                           # a two-input gated function, checked over pairs (a, b)
//! symbol = "lumen_swiglu_f16"
//! function = "swiglu"                  # swiglu | geglu | geglu-tanh | reglu
//! format = "f16"
//! role = "forward"                     # forward | derivative-a | derivative-b
//! range = "-20,-19"                    # patterns of a (every b each); as check --range
//! sweep = "dense,edge,random"          # as check --sweep; also points, per-binade, seed
//! max-ulp = 1.0                        # as check --max-ulp, --allow-non-finite
//! allow-non-finite = false
//! ```
//!
//! Every error is one line naming the file and the line (and the key, when there is one).

use super::{KernelRole, KernelSpec, ParamPassing};
use serde::Deserialize;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use toml::Spanned;

/// Functions whose derivative is a function of their output, for `gradient-from-output`.
pub const FROM_OUTPUT_FUNCTIONS: [&str; 3] = ["sigmoid", "tanh", "elu"];

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct File {
    library: Option<Spanned<String>>,
    #[serde(default)]
    kernel: Vec<Spanned<Entry>>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
struct Entry {
    symbol: Option<Spanned<String>>,
    #[serde(default)]
    variants: Vec<Spanned<String>>,
    caller_fpenv: Option<Spanned<String>>,
    function: Spanned<String>,
    format: Option<Spanned<String>>,
    #[serde(alias = "input_format")]
    input_format: Option<Spanned<String>>,
    #[serde(alias = "output_format")]
    output_format: Option<Spanned<String>>,
    #[serde(default)]
    role: Option<Spanned<Role>>,
    #[serde(default)]
    params: BTreeMap<String, Spanned<Number>>,
    #[serde(default)]
    param_passing: Option<Spanned<Passing>>,
    #[serde(default)]
    in_place: bool,
    #[serde(default = "yes")]
    thread_safe: bool,
    signature: Option<Spanned<String>>,
    strides: Option<Spanned<super::stride::StridesValue>>,
    library: Option<Spanned<String>>,
    // The pair-check keys of a two-input entry.
    range: Option<Spanned<String>>,
    sweep: Option<Spanned<String>>,
    points: Option<Spanned<u64>>,
    per_binade: Option<Spanned<u32>>,
    seed: Option<Spanned<u64>>,
    max_ulp: Option<Spanned<f64>>,
    allow_non_finite: Option<Spanned<bool>>,
}

fn yes() -> bool {
    true
}

#[derive(Deserialize, Clone, Copy)]
#[serde(rename_all = "kebab-case")]
enum Role {
    Forward,
    Derivative,
    Gradient,
    GradientFromOutput,
    DerivativeA,
    DerivativeB,
}

#[derive(Deserialize, Clone, Copy, PartialEq)]
#[serde(rename_all = "kebab-case")]
enum Passing {
    Baked,
    Trailing,
}

/// A parameter value: a string keeps the exact decimal; a TOML number is taken by its shortest
/// round-trip spelling.
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
            Number::Float(f) => f.to_string(),
        }
    }
}

/// What a manifest entry asks beyond one [`KernelSpec`].
#[derive(Clone, Debug, Default)]
pub struct EntryExtras {
    /// `variants`: the symbols measured and compared (the spec's symbol is the first).
    pub variants: Vec<String>,
    /// `caller-fpenv`: the caller's FP environment, as `check --caller-fpenv` takes it.
    pub caller_fpenv: Option<String>,
}

/// A manifest entry of a two-input gated function, which `check --manifest` runs over pairs
/// (its keys as the options of `check --function swiglu …` name them).
#[derive(Clone, Debug, Default)]
pub struct PairEntry {
    /// The library, resolved.
    pub library: PathBuf,
    /// The kernel's symbol.
    pub symbol: String,
    /// The gated function's name.
    pub function: String,
    /// The format's name.
    pub format: String,
    /// forward, derivative-a or derivative-b.
    pub role: String,
    /// Parameters as NAME=VALUE.
    pub params: Vec<String>,
    /// `range`.
    pub range: Option<String>,
    /// `sweep`, comma-separated kinds.
    pub sweep: Option<String>,
    /// `points`.
    pub points: Option<u64>,
    /// `per-binade`.
    pub per_binade: Option<u32>,
    /// `seed`.
    pub seed: Option<u64>,
    /// `max-ulp`.
    pub max_ulp: Option<f64>,
    /// `allow-non-finite`.
    pub allow_non_finite: Option<bool>,
    /// `in-place`.
    pub in_place: bool,
    /// `thread-safe`.
    pub thread_safe: bool,
}

/// A manifest as `check` runs it: the one-input entries, and the two-input (gated) ones.
pub type CheckManifest = (Vec<(KernelSpec, EntryExtras)>, Vec<PairEntry>);

/// Reads a manifest for `check`, which runs two-input entries too.
pub fn load_check_manifest(path: &Path) -> Result<CheckManifest, String> {
    load_manifest_inner(path).map_err(|e| e.replace('\n', "\\n").replace('\r', "\\r"))
}

/// Reads a manifest; library paths are resolved relative to the manifest's directory.
pub fn load_manifest(path: &Path) -> Result<Vec<KernelSpec>, String> {
    Ok(load_manifest_entries(path)?
        .into_iter()
        .map(|(spec, _)| spec)
        .collect())
}

/// [`load_manifest`] with each entry's variants and caller environment.
pub fn load_manifest_entries(path: &Path) -> Result<Vec<(KernelSpec, EntryExtras)>, String> {
    let (entries, pairs) = load_check_manifest(path)?;
    match pairs.first() {
        Some(p) => Err(format!(
            "manifest {}: kernel {}: {} takes two inputs: only `check --manifest` runs such entries",
            path.display(),
            p.symbol,
            p.function
        )
        .replace('\n', "\\n")),
        None => Ok(entries),
    }
}

/// [`load_manifest_entries`], before newlines in quoted text are escaped.
fn load_manifest_inner(path: &Path) -> Result<CheckManifest, String> {
    let shown = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => format!("manifest {shown}: no such file"),
        _ => format!("manifest {shown}: cannot read: {e}"),
    })?;
    let at = |span: std::ops::Range<usize>| -> String {
        let line = text[..span.start.min(text.len())].matches('\n').count() + 1;
        format!("manifest {shown} line {line}")
    };
    let file: File = toml::from_str(&text).map_err(|e| {
        let message = e.message().split_whitespace().collect::<Vec<_>>().join(" ");
        match e.span() {
            Some(span) => format!("{}: {message}", at(span)),
            None => format!("manifest {shown}: {message}"),
        }
    })?;
    if file.kernel.is_empty() {
        return Err(format!("manifest {shown}: no [[kernel]] entries"));
    }
    let dir = path.parent().map(Path::to_path_buf).unwrap_or_default();
    let resolve = |p: &str| -> PathBuf {
        let p = PathBuf::from(p);
        if p.is_absolute() {
            p
        } else {
            dir.join(p)
        }
    };
    let mut specs = Vec::new();
    let mut pairs = Vec::new();
    for entry in &file.kernel {
        let k = entry.get_ref();
        let symbol = match (&k.symbol, k.variants.first()) {
            (Some(s), None) => s,
            (None, Some(first)) => first,
            (Some(s), Some(_)) => {
                return Err(format!(
                    "{}: key `variants`: give either `symbol` or `variants`, not both",
                    at(s.span())
                ))
            }
            (None, None) => {
                return Err(format!(
                    "{}: kernel entry has neither `symbol` nor `variants`",
                    at(entry.span())
                ))
            }
        };
        for v in &k.variants {
            if v.get_ref().trim().is_empty() {
                return Err(format!("{}: key `variants`: empty symbol", at(v.span())));
            }
        }
        if let Some(env) = &k.caller_fpenv {
            crate::kernel::fpenv::caller_word(0, env.get_ref())
                .map_err(|e| format!("{}: key `caller-fpenv`: {e}", at(env.span())))?;
        }
        let library = k
            .library
            .as_ref()
            .or(file.library.as_ref())
            .ok_or_else(|| {
                format!(
                    "{}: kernel '{}' has no library (set `library` at the top or in the entry)",
                    at(entry.span()),
                    symbol.get_ref()
                )
            })?;
        if let Some(g) = crate::activation::lookup_gated(k.function.get_ref()) {
            pairs.push(pair_entry(
                k,
                g.name(),
                resolve(library.get_ref()),
                symbol,
                &at,
            )?);
            continue;
        }
        let pair_only = [
            (k.range.as_ref().map(|v| v.span()), "range"),
            (k.sweep.as_ref().map(|v| v.span()), "sweep"),
            (k.points.as_ref().map(|v| v.span()), "points"),
            (k.per_binade.as_ref().map(|v| v.span()), "per-binade"),
            (k.seed.as_ref().map(|v| v.span()), "seed"),
            (k.max_ulp.as_ref().map(|v| v.span()), "max-ulp"),
            (
                k.allow_non_finite.as_ref().map(|v| v.span()),
                "allow-non-finite",
            ),
        ];
        if let Some((Some(span), key)) = pair_only.into_iter().find(|(s, _)| s.is_some()) {
            return Err(format!(
                "{}: key `{key}`: applies to two-input entries (swiglu, geglu, geglu-tanh, reglu) only; a one-input entry takes the command's options",
                at(span)
            ));
        }
        let function = crate::activation::lookup(k.function.get_ref()).ok_or_else(|| {
            let names: Vec<_> = crate::activation::catalog()
                .iter()
                .map(|f| f.name())
                .collect();
            format!(
                "{}: key `function`: unknown function '{}' (known: {})",
                at(k.function.span()),
                k.function.get_ref(),
                names.join(", ")
            )
        })?;
        let (format_key, input_key) = match (&k.format, &k.input_format, &k.output_format) {
            (Some(f), None, None) => (("format", f), None),
            (None, Some(i), Some(o)) => (("output-format", o), Some(i)),
            (Some(f), _, _) => {
                return Err(format!(
                    "{}: key `format`: give `format` or both `input-format` and `output-format`, not both",
                    at(f.span())
                ))
            }
            (None, None, None) => {
                return Err(format!(
                    "{}: kernel entry has no `format` (or `input-format` and `output-format`)",
                    at(entry.span())
                ))
            }
            (None, Some(_), None) | (None, None, Some(_)) => {
                return Err(format!(
                    "{}: kernel entry needs both `input-format` and `output-format` (or `format`)",
                    at(entry.span())
                ))
            }
        };
        let named = |(key, name): (&str, &Spanned<String>)| {
            crate::format::by_name(name.get_ref()).ok_or_else(|| {
                format!(
                    "{}: key `{key}`: unknown format '{}' (known: {}, e4m3-sat, e5m2-sat)",
                    at(name.span()),
                    name.get_ref(),
                    crate::format::KNOWN
                )
            })
        };
        let format = named(format_key)?;
        // An input is a bit pattern, not a rounding: a `-sat` suffix means nothing there.
        let input_format = match input_key {
            None => format,
            Some(i) => {
                let f = named(("input-format", i))?;
                let base =
                    crate::format::by_name(f.name().strip_suffix("-sat").unwrap_or(f.name()))
                        .unwrap_or(f);
                if base.name() == format.name() {
                    format
                } else {
                    base
                }
            }
        };
        if input_format.name() != format.name() && k.in_place {
            return Err(format!(
                "{}: key `in-place`: y == x needs equal input and output formats",
                at(entry.span())
            ));
        }
        if symbol.get_ref().trim().is_empty() {
            return Err(format!("{}: key `symbol`: empty", at(symbol.span())));
        }
        let role = match k.role.as_ref().map(|r| *r.get_ref()) {
            None | Some(Role::Forward) => KernelRole::Forward,
            Some(Role::Derivative) => KernelRole::Derivative,
            Some(Role::Gradient) => KernelRole::Gradient { from_output: false },
            Some(Role::GradientFromOutput) => KernelRole::Gradient { from_output: true },
            Some(Role::DerivativeA | Role::DerivativeB) => {
                return Err(format!(
                    "{}: key `role`: derivative-a and derivative-b are roles of the two-input functions (swiglu, geglu, geglu-tanh, reglu)",
                    at(k.role.as_ref().expect("set").span())
                ))
            }
        };
        if role == (KernelRole::Gradient { from_output: true })
            && !FROM_OUTPUT_FUNCTIONS.contains(&function.name())
        {
            return Err(format!(
                "{}: key `role`: gradient-from-output is supported for {} only",
                at(k.role.as_ref().expect("set").span()),
                FROM_OUTPUT_FUNCTIONS.join(", ")
            ));
        }
        let mut params = Vec::new();
        for (name, value) in &k.params {
            let text_value = value.get_ref().text();
            crate::activation::Constants::parse_params(function, &[format!("{name}={text_value}")])
                .map_err(|e| format!("{}: key `params.{name}`: {e}", at(value.span())))?;
            params.push((name.clone(), text_value));
        }
        let param_passing = match k.param_passing.as_ref().map(|p| *p.get_ref()) {
            Some(Passing::Trailing) => {
                if function.params().is_empty() {
                    return Err(format!(
                        "{}: key `param-passing`: {} has no parameters to pass",
                        at(k.param_passing.as_ref().expect("set").span()),
                        function.name()
                    ));
                }
                ParamPassing::Trailing
            }
            _ => ParamPassing::Baked,
        };
        let signature = super::Signature::parse(
            k.signature
                .as_ref()
                .map_or("contiguous", |s| s.get_ref().as_str()),
            k.strides.as_ref().map(|s| s.get_ref().text()).as_deref(),
        )
        .map_err(|e| match (&k.strides, &k.signature) {
            (Some(st), _) if !e.starts_with("unknown signature") => {
                format!("{}: key `strides`: {e}", at(st.span()))
            }
            (_, Some(sig)) => format!("{}: key `signature`: {e}", at(sig.span())),
            _ => format!("{}: {e}", at(entry.span())),
        })?;
        if signature != super::Signature::Contiguous && input_format.name() != format.name() {
            return Err(format!(
                "{}: key `signature`: the strided signature takes one format for x and y (no input-format/output-format pair)",
                at(k.signature.as_ref().expect("set").span())
            ));
        }
        if signature != super::Signature::Contiguous && role.takes_gradient() {
            return Err(format!(
                "{}: key `signature`: the strided signature takes forward and derivative kernels only",
                at(k.signature.as_ref().expect("set").span())
            ));
        }
        let extras = EntryExtras {
            variants: k.variants.iter().map(|v| v.get_ref().clone()).collect(),
            caller_fpenv: k.caller_fpenv.as_ref().map(|e| e.get_ref().clone()),
        };
        specs.push((
            KernelSpec {
                library: resolve(library.get_ref()),
                symbol: symbol.get_ref().clone(),
                function: function.name().to_string(),
                format,
                input_format,
                role,
                params,
                param_passing,
                in_place: k.in_place,
                thread_safe: k.thread_safe,
                signature,
            },
            extras,
        ));
    }
    Ok((specs, pairs))
}

/// The pair entry of a gated function: keys that describe a one-input kernel are refused.
fn pair_entry(
    k: &Entry,
    function: &str,
    library: PathBuf,
    symbol: &Spanned<String>,
    at: &dyn Fn(std::ops::Range<usize>) -> String,
) -> Result<PairEntry, String> {
    let one_input = [
        (k.variants.first().map(|v| v.span()), "variants"),
        (k.caller_fpenv.as_ref().map(|v| v.span()), "caller-fpenv"),
        (k.input_format.as_ref().map(|v| v.span()), "input-format"),
        (k.output_format.as_ref().map(|v| v.span()), "output-format"),
        (k.param_passing.as_ref().map(|v| v.span()), "param-passing"),
        (k.signature.as_ref().map(|v| v.span()), "signature"),
        (k.strides.as_ref().map(|v| v.span()), "strides"),
    ];
    if let Some((Some(span), key)) = one_input.into_iter().find(|(s, _)| s.is_some()) {
        return Err(format!(
            "{}: key `{key}`: not available for the two-input function {function} (its entry takes symbol, function, format, role, params, range, sweep, points, per-binade, seed, max-ulp, allow-non-finite, in-place, thread-safe, library)",
            at(span)
        ));
    }
    let format = k
        .format
        .as_ref()
        .ok_or_else(|| format!("{}: kernel entry has no `format`", at(symbol.span())))?;
    let role = match k.role.as_ref().map(|r| *r.get_ref()) {
        None | Some(Role::Forward) => "forward",
        Some(Role::DerivativeA) => "derivative-a",
        Some(Role::DerivativeB) => "derivative-b",
        Some(_) => {
            return Err(format!(
                "{}: key `role`: {function} takes two inputs: forward, derivative-a (dy/da) or derivative-b (dy/db)",
                at(k.role.as_ref().expect("set").span())
            ))
        }
    };
    if symbol.get_ref().trim().is_empty() {
        return Err(format!("{}: key `symbol`: empty", at(symbol.span())));
    }
    Ok(PairEntry {
        library,
        symbol: symbol.get_ref().clone(),
        function: function.to_string(),
        format: format.get_ref().clone(),
        role: role.to_string(),
        params: k
            .params
            .iter()
            .map(|(name, v)| format!("{name}={}", v.get_ref().text()))
            .collect(),
        range: k.range.as_ref().map(|v| v.get_ref().clone()),
        sweep: k.sweep.as_ref().map(|v| v.get_ref().clone()),
        points: k.points.as_ref().map(|v| *v.get_ref()),
        per_binade: k.per_binade.as_ref().map(|v| *v.get_ref()),
        seed: k.seed.as_ref().map(|v| *v.get_ref()),
        max_ulp: k.max_ulp.as_ref().map(|v| *v.get_ref()),
        allow_non_finite: k.allow_non_finite.as_ref().map(|v| *v.get_ref()),
        in_place: k.in_place,
        thread_safe: k.thread_safe,
    })
}
