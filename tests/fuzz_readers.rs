//! Fuzz tests of every reader: the kernel manifest and the certify spec (TOML), shard reports
//! and their states (`merge`), `compare` inputs, recorded .npy headers and the command-line
//! options of `check`. Each reader gets a bounded, seeded loop of mutations of valid inputs
//! (byte flips, truncation, splices of valid tokens, numbers edited to extremes, wrong types,
//! missing and duplicated keys) and must answer every one without a panic or an abort: a
//! result or a one-line error. A small sample goes through the real binary, which must exit
//! 0, 1 or 2, and with 2 print exactly one line on stderr.
//!
//! `cargo test --release --test fuzz_readers` runs 300 inputs per reader; the long run is
//! `FUZZ_INPUTS=100000 cargo test --release --test fuzz_readers -- --ignored --nocapture`
//! (`FUZZ_READERS=manifest,shards` to run only some).

use serde_json::Value;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::OnceLock;
use std::time::Instant;

/// SplitMix64 (Steele, Lea, Flood, OOPSLA 2014): seeded, the same on every platform.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
    fn pick<'a, T>(&mut self, list: &'a [T]) -> &'a T {
        &list[self.below(list.len())]
    }
}

/// Values a field is edited to: zeros, signs, the ends of the integer types, huge and tiny
/// floats, NaN and infinities (as JSON cannot hold them: strings), wrong types.
const EXTREMES: &[&str] = &[
    "0",
    "-1",
    "1",
    "2",
    "1e300",
    "-1e300",
    "1e-320",
    "0.5",
    "255",
    "65536",
    "4294967295",
    "4294967296",
    "9007199254740993",
    "18446744073709551615",
    "18446744073709551616",
    "-9223372036854775809",
    "170141183460469231731687303715884105728",
    "null",
    "true",
    "false",
    "\"\"",
    "\"NaN\"",
    "\"inf\"",
    "\"-inf\"",
    "\"0x7fc00000\"",
    "\"0xffffffffffff\"",
    "\"x\"",
    "[]",
    "[0]",
    "[[]]",
    "{}",
    "{\"a\":1}",
];

/// Tokens spliced into TOML text.
const TOML_TOKENS: &[&str] = &[
    "0",
    "-1",
    "1e300",
    "-1e300",
    "nan",
    "inf",
    "-inf",
    "99999999999999999999",
    "-9223372036854775808",
    "\"\"",
    "\"x\"",
    "\"1e40\"",
    "\"1e-400\"",
    "\"-0\"",
    "true",
    "[]",
    "{}",
    "[[kernel]]",
    "[sweep]",
    "[require]",
    "= ",
    "\n",
    "\"",
    "'",
    "#",
    "\u{0}",
    "\u{fffd}",
];

/// One byte-level mutation: flip a bit, overwrite a byte, truncate, delete or duplicate a
/// span, splice a token, or edit a number to an extreme.
fn mutate_bytes(rng: &mut Rng, input: &[u8], tokens: &[&str]) -> Vec<u8> {
    let mut v = input.to_vec();
    if v.is_empty() {
        return rng.pick(tokens).as_bytes().to_vec();
    }
    let at = rng.below(v.len());
    match rng.below(7) {
        0 => v[at] ^= 1 << rng.below(8),
        1 => v[at] = rng.next() as u8,
        2 => v.truncate(at),
        3 => {
            let end = (at + 1 + rng.below(32)).min(v.len());
            v.drain(at..end);
        }
        4 => {
            let from = rng.below(v.len());
            let end = (from + 1 + rng.below(64)).min(v.len());
            let span = v[from..end].to_vec();
            v.splice(at..at, span);
        }
        5 => {
            let t = rng.pick(tokens).as_bytes().to_vec();
            v.splice(at..at, t);
        }
        _ => {
            // The digits around `at` (or the next number after it) become an extreme.
            let start = (at..v.len()).find(|&i| v[i].is_ascii_digit());
            if let Some(s) = start {
                let end = (s..v.len())
                    .find(|&i| !(v[i].is_ascii_digit() || b".eE+-".contains(&v[i])))
                    .unwrap_or(v.len());
                let t = rng.pick(tokens).as_bytes().to_vec();
                v.splice(s..end, t);
            }
        }
    }
    v
}

/// Every node of a JSON value, as a pointer (the first 4096).
fn pointers(v: &Value, here: String, out: &mut Vec<String>) {
    if out.len() >= 4096 {
        return;
    }
    out.push(here.clone());
    match v {
        Value::Object(m) => {
            for (k, c) in m {
                let k = k.replace('~', "~0").replace('/', "~1");
                pointers(c, format!("{here}/{k}"), out);
            }
        }
        Value::Array(a) => {
            for (i, c) in a.iter().enumerate() {
                pointers(c, format!("{here}/{i}"), out);
            }
        }
        _ => {}
    }
}

/// One structural mutation of a JSON document: a node edited to an extreme or a wrong type,
/// replaced by another node (a splice of valid tokens), removed, duplicated, or a number
/// moved by one.
fn mutate_json(rng: &mut Rng, doc: &mut Value) {
    let mut all = Vec::new();
    pointers(doc, String::new(), &mut all);
    let target = rng.pick(&all).clone();
    let donor_at: &String = rng.pick(&all);
    let donor = doc.pointer(donor_at).cloned().unwrap_or(Value::Null);
    let (parent, key) = match target.rfind('/') {
        Some(i) => (target[..i].to_string(), target[i + 1..].to_string()),
        None => (String::new(), String::new()),
    };
    let action = rng.below(6);
    if action == 0 && !target.is_empty() {
        // A missing key or element.
        match doc.pointer_mut(&parent) {
            Some(Value::Object(m)) => {
                m.remove(&key.replace("~1", "/").replace("~0", "~"));
            }
            Some(Value::Array(a)) => {
                if let Ok(i) = key.parse::<usize>() {
                    if i < a.len() {
                        a.remove(i);
                    }
                }
            }
            _ => {}
        }
        return;
    }
    if action == 1 {
        // A duplicated element (arrays) or a key repeated under another name's value.
        if let Some(Value::Array(a)) = doc.pointer_mut(&parent) {
            if let Ok(i) = key.parse::<usize>() {
                if i < a.len() {
                    let c = a[i].clone();
                    a.insert(i, c);
                }
            }
            return;
        }
    }
    let Some(node) = doc.pointer_mut(&target) else {
        return;
    };
    *node = match action {
        2 => donor,
        3 => match node.as_f64() {
            Some(x) => {
                let d = [1.0, -1.0, 0.5, 1e9, -1e9][rng.below(5)];
                serde_json::Number::from_f64(x + d).map_or(Value::Null, Value::Number)
            }
            None => Value::from(rng.next() as u32),
        },
        _ => {
            let t = rng.pick(EXTREMES);
            serde_json::from_str(t).unwrap_or_else(|_| Value::from(*t))
        }
    };
}

/// Mutates JSON text: mostly structurally (to reach past the parser), sometimes bytewise.
fn mutate_json_text(rng: &mut Rng, seed: &Value, text: &str) -> Vec<u8> {
    if rng.below(4) == 0 {
        let mut bytes = text.as_bytes().to_vec();
        for _ in 0..1 + rng.below(3) {
            bytes = mutate_bytes(rng, &bytes, EXTREMES);
        }
        return bytes;
    }
    let mut doc = seed.clone();
    for _ in 0..1 + rng.below(3) {
        mutate_json(rng, &mut doc);
    }
    serde_json::to_vec(&doc).unwrap()
}

/// Mutates TOML text: bytewise, or line by line (a line dropped, repeated — a duplicated
/// key —, or its value replaced by an extreme).
fn mutate_toml(rng: &mut Rng, text: &str) -> Vec<u8> {
    let mut out = text.to_string();
    for _ in 0..1 + rng.below(3) {
        let mut lines: Vec<String> = out.lines().map(String::from).collect();
        if lines.is_empty() || rng.below(3) == 0 {
            out = String::from_utf8_lossy(&mutate_bytes(rng, out.as_bytes(), TOML_TOKENS))
                .into_owned();
            continue;
        }
        let i = rng.below(lines.len());
        match rng.below(3) {
            0 => {
                lines.remove(i);
            }
            1 => {
                let l = lines[i].clone();
                lines.insert(i, l);
            }
            _ => {
                if let Some(eq) = lines[i].find('=') {
                    let key = lines[i][..eq].to_string();
                    lines[i] = format!("{key}= {}", rng.pick(TOML_TOKENS));
                }
            }
        }
        out = lines.join("\n");
    }
    out.into_bytes()
}

fn scratch(name: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR")).join(format!("fuzz-{name}"));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn ulpgauge(args: &[&str]) -> (i32, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(args)
        .output()
        .expect("run ulpgauge");
    if let Some(sig) = std::os::unix::process::ExitStatusExt::signal(&out.status) {
        panic!("ulpgauge {args:?} died of signal {sig}");
    }
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// Inputs tried, inputs accepted, and the panics met (with where the input was kept).
type Outcome = (usize, usize, Vec<String>);

/// A reader's fuzz loop for a number of inputs.
type Reader = fn(usize) -> Outcome;

/// How many inputs per reader: 300 by default, `FUZZ_INPUTS` for the long run.
fn budget(long: bool) -> usize {
    if long {
        std::env::var("FUZZ_INPUTS")
            .ok()
            .and_then(|s| s.parse().ok())
            .unwrap_or(100_000)
    } else {
        300
    }
}

/// Runs `reader` on `n` mutated inputs; every panic is counted with the input that caused
/// it (saved beside the scratch folder for replay). Returns (inputs, accepted, panics).
fn fuzz(
    name: &str,
    n: usize,
    seed: u64,
    mut make: impl FnMut(&mut Rng) -> Vec<u8>,
    mut reader: impl FnMut(&[u8]) -> Result<(), String>,
) -> Outcome {
    let mut rng = Rng(seed);
    let (mut accepted, mut panics) = (0, Vec::new());
    let started = Instant::now();
    for k in 0..n {
        let input = make(&mut rng);
        match catch_unwind(AssertUnwindSafe(|| reader(&input))) {
            Ok(Ok(())) => accepted += 1,
            Ok(Err(message)) => {
                assert!(
                    !message.contains('\n') && !message.is_empty(),
                    "{name} #{k}: not a one-line error: {message:?}"
                );
                // merge turns a panic behind its validation into this message.
                if message.contains("inconsistent and cannot be merged") {
                    panics.push(format!("#{k}: {message}"));
                }
            }
            Err(_) => {
                let keep = Path::new(env!("CARGO_TARGET_TMPDIR"))
                    .join(format!("fuzz-crash-{name}-{k}.bin"));
                let _ = std::fs::write(&keep, &input);
                panics.push(format!("#{k}: panic, input in {}", keep.display()));
            }
        }
    }
    eprintln!(
        "fuzz {name}: {n} inputs, {accepted} accepted, {} panics, {:.1} s",
        panics.len(),
        started.elapsed().as_secs_f64()
    );
    (n, accepted, panics)
}

fn assert_clean(name: &str, (n, _, panics): Outcome) {
    assert!(
        panics.is_empty(),
        "{name}: {} of {n} inputs panicked: {:?}",
        panics.len(),
        &panics[..panics.len().min(5)]
    );
}

// ---------------------------------------------------------------------------------------
// Seeds: valid inputs of every reader, made by the real binary where they are its output.

struct Seeds {
    dir: PathBuf,
    /// Shard reports, each set complete: (paths, parsed JSON).
    shard_sets: Vec<Vec<(PathBuf, Value)>>,
    /// Whole reports for compare.
    reports: Vec<(PathBuf, String)>,
}

fn seeds() -> &'static Seeds {
    static SEEDS: OnceLock<Seeds> = OnceLock::new();
    SEEDS.get_or_init(|| {
        let dir = scratch("seeds");
        let base = |extra: &[&str], json: &Path| {
            let mut a = vec![
                "check",
                "--quiet",
                "--no-progress",
                "--json",
                json.to_str().unwrap(),
            ];
            a.extend_from_slice(extra);
            if !a.contains(&"--builtin-kernel") {
                a.extend(["--builtin-kernel", "reference"]);
            }
            let (code, err) = ulpgauge(&a);
            assert!([0, 1].contains(&code), "{a:?}: {err}");
        };
        // An exhaustive bf16 sweep (streamed runs), a sampled f32 one (runs found by gap
        // scans, a kink in the derivative role) and an exhaustive f16 one of a function with
        // overflow (non-finite runs in the state).
        let kinds: [&[&str]; 4] = [
            &["--function", "sigmoid", "--format", "bf16", "--range=1,3"],
            &[
                "--function",
                "relu",
                "--role",
                "derivative",
                "--format",
                "f32",
                "--range=-1,1",
                "--per-binade",
                "2",
            ],
            // NaN for every x where e^x overflows (the blended SIMD form): streamed runs in
            // an exhaustive sweep, runs found by gap scans in a sampled one.
            &[
                "--builtin-kernel",
                "blended-elu",
                "--function",
                "elu",
                "--format",
                "f16",
                "--range=8,16",
            ],
            &[
                "--builtin-kernel",
                "blended-elu",
                "--function",
                "elu",
                "--format",
                "f32",
                "--range=80,100",
                "--per-binade",
                "4",
                "--points",
                "50",
                "--sweep",
                "dense,edge,random",
            ],
        ];
        let mut shard_sets = Vec::new();
        let mut reports = Vec::new();
        for (k, extra) in kinds.iter().enumerate() {
            let whole = dir.join(format!("whole-{k}.json"));
            base(extra, &whole);
            reports.push((whole.clone(), std::fs::read_to_string(&whole).unwrap()));
            let mut set = Vec::new();
            for i in 1..=2 {
                let path = dir.join(format!("shard-{k}-{i}.json"));
                let shard = format!("{i}/2");
                let mut e = extra.to_vec();
                e.extend(["--shard", &shard]);
                base(&e, &path);
                let v: Value =
                    serde_json::from_str(&std::fs::read_to_string(&path).unwrap()).unwrap();
                set.push((path, v));
            }
            shard_sets.push(set);
        }
        Seeds {
            dir,
            shard_sets,
            reports,
        }
    })
}

const MANIFEST: &str = r#"library = "build/liblumen_edge.so"

[[kernel]]
symbol = "lumen_elu_f32"
function = "elu"
format = "f32"
role = "forward"
params = { alpha = "1.0" }
param-passing = "trailing"
in-place = false
thread-safe = true

[[kernel]]
symbol = "lumen_sigmoid_grad_f16"
function = "sigmoid"
format = "f16"
role = "gradient-from-output"
library = "other/liblumen.so"
"#;

const SPEC: &str = r#"[kernel]
library = "build/liblumen_edge.so"
symbol = "lumen_leaky_relu_grad_f32"
function = "leaky-relu"
format = "f32"
role = "derivative"
params = { alpha = "0.01" }
param_passing = "trailing"
param_rounding = "format"
in_place = false
thread_safe = true
timeout = 10.0

[sweep]
kind = ["dense", "edge"]
range = "-8,8"
points = 256
seed = 1
neighbours = 16
random_mode = "bits"

[require]
max_ulp = 1.0
mean_ulp = 0.1
correctly_rounded = 0.99
faithful = true
nan_propagation = true
signed_zero = true
limits = true
no_spurious_overflow = true
hygiene = ["tail", "bounds"]
kinks = "either"
[[require.range]]
range = "-1,1"
max_ulp = 0.5
"#;

/// A valid .npy file (format 1.0: magic, version, header length, header, data) holding
/// `n` little-endian 16-bit patterns, as numpy writes them (NEP 1, "A simple file format
/// for NumPy arrays").
fn npy_u16(n: usize) -> Vec<u8> {
    let mut header = format!("{{'descr': '<f2', 'fortran_order': False, 'shape': ({n},), }}");
    while (10 + header.len() + 1) % 64 != 0 {
        header.push(' ');
    }
    header.push('\n');
    let mut v = b"\x93NUMPY\x01\x00".to_vec();
    v.extend((header.len() as u16).to_le_bytes());
    v.extend(header.as_bytes());
    for i in 0..n {
        v.extend(((0x3c00 + i) as u16).to_le_bytes());
    }
    v
}

// ---------------------------------------------------------------------------------------
// Readers.

fn manifest_reader(dir: &Path) -> impl FnMut(&[u8]) -> Result<(), String> + '_ {
    let path = dir.join("manifest.toml");
    move |input| {
        std::fs::write(&path, input).unwrap();
        ulpgauge::kernel::load_manifest(&path).map(|_| ())
    }
}

fn spec_reader(dir: &Path) -> impl FnMut(&[u8]) -> Result<(), String> + '_ {
    let path = dir.join("spec.toml");
    move |input| {
        std::fs::write(&path, input).unwrap();
        ulpgauge::certify::spec::load(&path).map(|_| ())
    }
}

fn compare_reader(dir: &Path) -> impl FnMut(&[u8]) -> Result<(), String> + '_ {
    let path = dir.join("report.json");
    move |input| {
        std::fs::write(&path, input).unwrap();
        ulpgauge::compare::load(&path, "baseline").map(|_| ())
    }
}

fn npy_reader(dir: &Path) -> impl FnMut(&[u8]) -> Result<(), String> + '_ {
    let path = dir.join("x.npy");
    move |input| {
        std::fs::write(&path, input).unwrap();
        let f16 = ulpgauge::format::by_name("f16").unwrap();
        ulpgauge::recorded::column::Column::open("--inputs", &path, f16).map(|_| ())
    }
}

/// Merges a set of shard reports, one of them replaced by the mutated text.
fn merge_text(set: &[(PathBuf, Value)], which: usize, input: &[u8]) -> Result<(), String> {
    let mut files = Vec::new();
    for (i, (path, value)) in set.iter().enumerate() {
        let value = if i == which {
            let text = std::str::from_utf8(input).map_err(|e| e.to_string())?;
            serde_json::from_str(text).map_err(|e| format!("not JSON: {e}"))?
        } else {
            value.clone()
        };
        files.push(ulpgauge::merge::ShardFile {
            path: path.clone(),
            value,
        });
    }
    ulpgauge::merge::merge(&files).map(|_| ())
}

/// Mutations aimed at the state: three in four edit a node under `shard.state`.
fn mutate_shard(rng: &mut Rng, seed: &Value) -> Vec<u8> {
    let mut doc = seed.clone();
    let on_state = rng.below(4) != 0;
    for _ in 0..1 + rng.below(2) {
        if on_state {
            let mut state = doc.pointer("/shard/state").cloned().unwrap_or(Value::Null);
            mutate_json(rng, &mut state);
            if let Some(s) = doc.pointer_mut("/shard/state") {
                *s = state;
            }
        } else {
            mutate_json(rng, &mut doc);
        }
    }
    if rng.below(8) == 0 {
        return mutate_bytes(rng, &serde_json::to_vec(&doc).unwrap(), EXTREMES);
    }
    serde_json::to_vec(&doc).unwrap()
}

fn run_manifest(n: usize) -> Outcome {
    let dir = scratch("manifest");
    fuzz(
        "manifest",
        n,
        1,
        |rng| mutate_toml(rng, MANIFEST),
        manifest_reader(&dir),
    )
}

fn run_spec(n: usize) -> Outcome {
    let dir = scratch("spec");
    fuzz(
        "certify-spec",
        n,
        2,
        |rng| mutate_toml(rng, SPEC),
        spec_reader(&dir),
    )
}

fn run_compare(n: usize) -> Outcome {
    let s = seeds();
    let dir = scratch("compare");
    let parsed: Vec<(Value, String)> = s
        .reports
        .iter()
        .map(|(_, t)| (serde_json::from_str(t).unwrap(), t.clone()))
        .collect();
    fuzz(
        "compare",
        n,
        3,
        |rng| {
            let (v, t) = rng.pick(&parsed);
            mutate_json_text(rng, v, t)
        },
        compare_reader(&dir),
    )
}

fn run_npy(n: usize) -> Outcome {
    let dir = scratch("npy");
    let seed = npy_u16(64);
    fuzz(
        "npy",
        n,
        4,
        |rng| {
            let mut v = seed.clone();
            for _ in 0..1 + rng.below(3) {
                v = mutate_bytes(
                    rng,
                    &v,
                    &[
                        "'<f2'",
                        "'<u2'",
                        "'>f4'",
                        "(0,)",
                        "(1,2)",
                        "()",
                        "True",
                        "99999999999999999999",
                        "-1",
                        "{",
                        "}",
                        "\n",
                    ],
                );
            }
            v
        },
        npy_reader(&dir),
    )
}

fn run_shards(n: usize) -> Outcome {
    let s = seeds();
    let mut total = (0, 0, Vec::new());
    for (k, set) in s.shard_sets.iter().enumerate() {
        let per = n.div_ceil(s.shard_sets.len());
        let r = fuzz(
            &format!("shard-state-{k}"),
            per,
            10 + k as u64,
            |rng| {
                // Which shard is mutated is chosen again in the reader from the input's
                // first byte, so it stays a function of the input.
                let which = rng.below(set.len());
                let mut v = vec![which as u8];
                v.extend(mutate_shard(rng, &set[which].1));
                v
            },
            |input| merge_text(set, input[0] as usize, &input[1..]),
        );
        total.0 += r.0;
        total.1 += r.1;
        total.2.extend(r.2);
    }
    total
}

// ---------------------------------------------------------------------------------------
// Command-line options, in process (clap and `build_config`) and through the binary.

#[derive(clap::Parser)]
struct CheckLine {
    #[command(flatten)]
    args: ulpgauge::cli::check::Args,
}

/// A quick check's options; the fuzzer edits values, drops or repeats options.
const OPTIONS: &[(&str, &str)] = &[
    ("--builtin-kernel", "reference"),
    ("--function", "elu"),
    ("--format", "bf16"),
    ("--range", "1,2"),
    ("--param", "alpha=1.5"),
    ("--param-rounding", "format"),
    ("--points", "100"),
    ("--per-binade", "16"),
    ("--neighbours", "4"),
    ("--seed", "7"),
    ("--timeout", "10"),
    ("--max-ulp", "4"),
    ("--abs-floor", "1e-3"),
    ("--csv-points-over", "8"),
    ("--list-runs", "5"),
    ("--max-restarts", "10"),
    ("--max-fault-time", "20"),
    ("--shard", "1/2"),
    ("--role", "forward"),
    ("--sweep", "exhaustive"),
];

const OPTION_VALUES: &[&str] = &[
    "0",
    "-1",
    "1e300",
    "-1e300",
    "1e18",
    "NaN",
    "inf",
    "1e-320",
    "18446744073709551615",
    "18446744073709551616",
    "4294967296",
    "65535",
    "2000000000",
    "",
    "x",
    "1/0",
    "0/0",
    "150/150",
    "1/18446744073709551615",
    "alpha=1e40",
    "alpha=1e-40",
    "alpha=NaN",
    "alpha=",
    "=1",
    "-inf,inf",
    "2,1",
    "nan,1",
    "1e300,1e301",
    "random",
    "dense",
    "edge",
    "gradient",
    "f32",
    "f16",
];

fn mutate_options(rng: &mut Rng) -> Vec<String> {
    let mut opts: Vec<(String, String)> = OPTIONS
        .iter()
        .filter(|_| rng.below(3) != 0)
        .map(|(f, v)| (f.to_string(), v.to_string()))
        .collect();
    for _ in 0..1 + rng.below(3) {
        if opts.is_empty() {
            break;
        }
        let i = rng.below(opts.len());
        match rng.below(4) {
            0 => {
                let o = opts[i].clone();
                opts.insert(i, o);
            }
            1 => {
                opts.remove(i);
            }
            _ => opts[i].1 = rng.pick(OPTION_VALUES).to_string(),
        }
    }
    let mut line = vec!["check".to_string()];
    for (f, v) in opts {
        line.push(format!("{f}={v}"));
    }
    line
}

/// Parses and validates an option line in process: what `check` does before any work.
fn options_reader(line: &[String]) -> Result<(), String> {
    use clap::Parser;
    let parsed = CheckLine::try_parse_from(line)
        .map_err(|e| ulpgauge::cli::one_line(&e.render().to_string()))?;
    let target = ulpgauge::cli::check::target_from_args(&parsed.args).map_err(|f| f.message)?;
    ulpgauge::cli::check::build_config(&target, &parsed.args).map_err(|f| f.message)?;
    Ok(())
}

fn run_options(n: usize) -> Outcome {
    fuzz(
        "options",
        n,
        5,
        |rng| mutate_options(rng).join("\u{1}").into_bytes(),
        |input| {
            let line: Vec<String> = String::from_utf8_lossy(input)
                .split('\u{1}')
                .map(String::from)
                .collect();
            options_reader(&line)
        },
    )
}

// ---------------------------------------------------------------------------------------
// The tests.

#[test]
fn manifest_reader_survives_mutations() {
    assert_clean("manifest", run_manifest(budget(false)));
}

#[test]
fn certify_spec_reader_survives_mutations() {
    assert_clean("certify-spec", run_spec(budget(false)));
}

#[test]
fn compare_reader_survives_mutations() {
    assert_clean("compare", run_compare(budget(false)));
}

#[test]
fn npy_header_reader_survives_mutations() {
    assert_clean("npy", run_npy(budget(false)));
}

#[test]
fn shard_state_reader_survives_mutations() {
    assert_clean("shards", run_shards(budget(false)));
}

#[test]
fn options_survive_mutations() {
    assert_clean("options", run_options(budget(false)));
}

/// The binary's side: mutated inputs each reader refuses give exit 2 and one line on
/// stderr, with no file written; accepted ones exit 0 or 1.
#[test]
fn the_binary_refuses_mutated_inputs_with_one_line() {
    let s = seeds();
    let dir = scratch("binary");
    let mut rng = Rng(99);
    let out = dir.join("out.json");
    let one_line = |args: &[&str], what: &str| {
        let _ = std::fs::remove_file(&out);
        let (code, err) = ulpgauge(args);
        assert!([0, 1, 2].contains(&code), "{what}: exit {code}: {err}");
        if code == 2 {
            assert_eq!(err.trim_end().lines().count(), 1, "{what}: {err:?}");
            assert!(!out.exists(), "{what}: a file written on bad input");
        }
        code
    };
    let mut refused = 0;
    for k in 0..12 {
        // Shards.
        let set = &s.shard_sets[k % s.shard_sets.len()];
        let which = rng.below(set.len());
        let bad = dir.join(format!("shard-{k}.json"));
        std::fs::write(&bad, mutate_shard(&mut rng, &set[which].1)).unwrap();
        let mut args = vec!["merge", "--json", out.to_str().unwrap()];
        let paths: Vec<String> = set
            .iter()
            .enumerate()
            .map(|(i, (p, _))| {
                if i == which {
                    bad.display().to_string()
                } else {
                    p.display().to_string()
                }
            })
            .collect();
        args.extend(paths.iter().map(String::as_str));
        refused += (one_line(&args, "merge") == 2) as u32;
        // Compare inputs.
        let (base, text) = &s.reports[k % s.reports.len()];
        let v: Value = serde_json::from_str(text).unwrap();
        let cand = dir.join(format!("compare-{k}.json"));
        std::fs::write(&cand, mutate_json_text(&mut rng, &v, text)).unwrap();
        refused += (one_line(
            &[
                "compare",
                base.to_str().unwrap(),
                cand.to_str().unwrap(),
                "--json",
                out.to_str().unwrap(),
            ],
            "compare",
        ) == 2) as u32;
        // A manifest (its libraries do not exist: always refused).
        let m = dir.join(format!("manifest-{k}.toml"));
        std::fs::write(&m, mutate_toml(&mut rng, MANIFEST)).unwrap();
        refused += (one_line(
            &[
                "check",
                "--manifest",
                m.to_str().unwrap(),
                "--json",
                out.to_str().unwrap(),
            ],
            "manifest",
        ) == 2) as u32;
        // A certify spec.
        let sp = dir.join(format!("spec-{k}.toml"));
        std::fs::write(&sp, mutate_toml(&mut rng, SPEC)).unwrap();
        refused += (one_line(
            &[
                "certify",
                "--spec",
                sp.to_str().unwrap(),
                "--json",
                out.to_str().unwrap(),
            ],
            "certify",
        ) == 2) as u32;
    }
    // Options that the in-process validation refuses are refused the same way by the
    // binary, before any work.
    let mut sent = 0;
    while sent < 12 {
        let mut line = mutate_options(&mut rng);
        if options_reader(&line).is_ok() {
            continue;
        }
        line.extend(["--quiet".into(), "--no-progress".into()]);
        line.extend(["--json".into(), out.display().to_string()]);
        let args: Vec<&str> = line.iter().map(String::as_str).collect();
        assert_eq!(one_line(&args, "options"), 2, "{line:?}");
        sent += 1;
    }
    assert!(refused > 0);
    let _ = s.dir.as_path();
}

/// The long run: `FUZZ_INPUTS` (default 10^5) inputs per reader.
#[test]
#[ignore]
fn long_fuzz_every_reader() {
    let n = budget(true);
    seeds();
    let runs: [(&str, Reader); 6] = [
        ("manifest", run_manifest),
        ("certify-spec", run_spec),
        ("compare", run_compare),
        ("npy", run_npy),
        ("shards", run_shards),
        ("options", run_options),
    ];
    // `FUZZ_READERS=manifest,shards` runs only those.
    let only = std::env::var("FUZZ_READERS").ok();
    let chosen = |name: &str| {
        only.as_deref()
            .map_or(true, |o| o.split(',').any(|r| r == name))
    };
    // One thread per reader: each has its own scratch folder.
    let results: Vec<(&str, Outcome)> = std::thread::scope(|scope| {
        let handles: Vec<_> = runs
            .iter()
            .filter(|(name, _)| chosen(name))
            .map(|&(name, run)| (name, scope.spawn(move || run(n))))
            .collect();
        handles
            .into_iter()
            .map(|(name, h)| (name, h.join().expect("reader thread")))
            .collect()
    });
    let mut failures = Vec::new();
    for (name, r) in results {
        if !r.2.is_empty() {
            failures.push(format!("{name}: {} panics, e.g. {}", r.2.len(), r.2[0]));
        }
    }
    assert!(failures.is_empty(), "{failures:#?}");
}

/// Edits that keep a state well-formed JSON but make it one no check could have written are
/// refused with the field's path in the message.
#[test]
fn corrupted_states_are_refused_naming_the_field() {
    let s = seeds();
    let edit = |set: usize, which: usize, pointer: &str, value: Value, expected: &str| {
        let mut doc = s.shard_sets[set][which].1.clone();
        *doc.pointer_mut(pointer)
            .unwrap_or_else(|| panic!("{pointer} in seed {set}")) = value;
        let err = merge_text(
            &s.shard_sets[set],
            which,
            &serde_json::to_vec(&doc).unwrap(),
        )
        .expect_err(pointer);
        assert!(err.contains(expected), "{pointer}: {err}");
        assert!(!err.contains("inconsistent and cannot be merged"), "{err}");
    };
    let state = "/shard/state";
    let mut bins =
        s.shard_sets[0][1].1[&"shard"]["state"]["stream"]["accuracy"]["histogram"].clone();
    bins.as_array_mut().unwrap().push(0.into());
    edit(
        0,
        1,
        &format!("{state}/stream/accuracy/histogram"),
        bins,
        "stream.accuracy.histogram",
    );
    edit(
        0,
        0,
        &format!("{state}/stream/accuracy/total/sum/base"),
        5000.into(),
        "stream.accuracy.total.sum.base",
    );
    edit(0, 1, &format!("{state}/inputs"), 0.into(), "inputs");
    edit(
        0,
        1,
        &format!("{state}/stream/accuracy/layout/mant_bits"),
        40.into(),
        "stream.accuracy.layout",
    );
    edit(
        2,
        1,
        &format!("{state}/stream/runs/builder/summary/totals/runs"),
        7.into(),
        "stream.runs.builder.summary.totals",
    );
    edit(
        3,
        0,
        &format!("{state}/runs/builder/summary/keep"),
        Value::from(u64::MAX),
        "runs.builder.summary.keep",
    );
    // A count read from the file sizes nothing: every part is asked for, a few are named.
    let mut huge = s.shard_sets[0].clone();
    for (_, v) in &mut huge {
        v["shard"]["count"] = Value::from(1u64 << 60);
    }
    let err = merge_text(&huge, 0, &serde_json::to_vec(&huge[0].1).unwrap()).unwrap_err();
    assert!(
        err.contains("missing shard(s)") && err.contains("more"),
        "{err}"
    );
}

/// Parameters that round to ±∞ or 0 in the kernel's format, and unbounded counts, are bad
/// input before any work.
#[test]
fn out_of_range_parameters_and_counts_are_bad_input() {
    for (extra, expected) in [
        (
            &["--param", "alpha=1e40", "--param-rounding", "format"][..],
            "rounds to inf in f16",
        ),
        (
            &["--param", "alpha=1e-40", "--param-rounding", "format"],
            "rounds to 0 in f16",
        ),
        (&["--param", "alpha=1e-400"], "outside the binary64 range"),
        (&["--neighbours", "4000000000"], "--neighbours"),
        (&["--list-runs", "18446744073709551615"], "--list-runs"),
    ] {
        let mut args = vec![
            "check",
            "--builtin-kernel",
            "reference",
            "--function",
            "elu",
            "--format",
            "f16",
            "--quiet",
        ];
        args.extend_from_slice(extra);
        let (code, err) = ulpgauge(&args);
        assert_eq!(code, 2, "{extra:?}: {err}");
        assert_eq!(err.trim_end().lines().count(), 1, "{err}");
        assert!(err.contains(expected), "{extra:?}: {err}");
    }
}
