//! Manifests of quantized kernels: the same `library` / `[[kernel]]` shape as the float
//! manifest, with `format = "i8" | "u8"` and the four quantization keys in every entry:
//!
//! ```toml
//! library = "build/liblumen_quant.so"
//! [[kernel]]
//! symbol = "lumen_sigmoid_u8_table"
//! function = "sigmoid"
//! format = "u8"
//! input-scale = "0.0625"        # exact decimals: strings keep them exact
//! input-zero-point = 128
//! output-scale = "0.00390625"
//! output-zero-point = 0
//! ```
//!
//! A manifest holds quantized kernels or float kernels, not both (their reports differ).

use super::spec::{IntType, QuantSpec, QuantTexts};
use serde::Deserialize;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// One quantized kernel of a manifest.
#[derive(Clone, Debug)]
pub struct QuantEntry {
    /// The library, resolved relative to the manifest.
    pub library: PathBuf,
    /// The symbol.
    pub symbol: String,
    /// Catalog function.
    pub function: String,
    /// Forward or derivative.
    pub derivative: bool,
    /// Parameters as NAME=VALUE.
    pub params: Vec<String>,
    /// Scales and zero points.
    pub spec: QuantSpec,
}

#[derive(Deserialize)]
struct File {
    library: Option<String>,
    #[serde(default)]
    kernel: Vec<toml::Table>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
struct Entry {
    symbol: String,
    function: String,
    format: String,
    #[serde(default)]
    role: Option<String>,
    #[serde(default)]
    params: BTreeMap<String, toml::Value>,
    library: Option<String>,
    input_scale: toml::Value,
    input_zero_point: toml::Value,
    output_scale: toml::Value,
    output_zero_point: toml::Value,
}

/// Whether the manifest at `path` lists any i8/u8 kernel (unreadable files answer false: the
/// float reader then reports them).
pub fn is_quantized(path: &Path) -> bool {
    let Ok(text) = std::fs::read_to_string(path) else {
        return false;
    };
    let Ok(file) = toml::from_str::<File>(&text) else {
        return false;
    };
    file.kernel.iter().any(|k| {
        k.get("format")
            .and_then(|f| f.as_str())
            .is_some_and(|f| IntType::by_name(f).is_some())
    })
}

/// Reads a quantized manifest; every error is one line naming the file and entry.
pub fn load(path: &Path) -> Result<Vec<QuantEntry>, String> {
    let shown = path.display();
    let text = std::fs::read_to_string(path).map_err(|e| format!("manifest {shown}: {e}"))?;
    let file: File = toml::from_str(&text)
        .map_err(|e| format!("manifest {shown}: {}", e.message().replace('\n', " ")))?;
    if file.kernel.is_empty() {
        return Err(format!("manifest {shown}: no [[kernel]] entries"));
    }
    let dir = path.parent().unwrap_or(Path::new("."));
    let mut entries = Vec::new();
    for (i, table) in file.kernel.into_iter().enumerate() {
        let at = |m: String| format!("manifest {shown}: kernel {}: {m}", i + 1);
        let e: Entry = toml::Value::Table(table)
            .try_into()
            .map_err(|err: toml::de::Error| at(err.message().replace('\n', " ")))?;
        let ty = IntType::by_name(&e.format).ok_or_else(|| {
            at(format!(
                "format '{}': a quantized manifest holds i8 and u8 kernels only",
                e.format
            ))
        })?;
        let derivative = match e.role.as_deref() {
            None | Some("forward") => false,
            Some("derivative") => true,
            Some(other) => {
                return Err(at(format!(
                    "role '{other}': quantized kernels are forward or derivative"
                )))
            }
        };
        let library = e
            .library
            .or(file.library.clone())
            .ok_or_else(|| at("no `library` (top level or in the entry)".to_string()))?;
        let texts = [
            value_text(&e.input_scale),
            value_text(&e.input_zero_point),
            value_text(&e.output_scale),
            value_text(&e.output_zero_point),
        ];
        let spec = QuantSpec::parse(
            ty,
            &QuantTexts {
                input_scale: Some(&texts[0]),
                input_zero_point: Some(&texts[1]),
                output_scale: Some(&texts[2]),
                output_zero_point: Some(&texts[3]),
            },
        )
        .map_err(|m| at(m.replace("--", "")))?;
        entries.push(QuantEntry {
            library: dir.join(library),
            symbol: e.symbol,
            function: e.function,
            derivative,
            params: e
                .params
                .iter()
                .map(|(n, v)| format!("{n}={}", value_text(v)))
                .collect(),
            spec,
        });
    }
    Ok(entries)
}

/// A TOML value as the decimal text it spells (strings keep exact decimals).
fn value_text(v: &toml::Value) -> String {
    match v {
        toml::Value::String(s) => s.trim().to_string(),
        toml::Value::Integer(i) => i.to_string(),
        toml::Value::Float(f) => f.to_string(),
        other => other.to_string(),
    }
}
