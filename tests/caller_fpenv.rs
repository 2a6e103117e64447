//! `check --caller-fpenv` and dispatch variants, against facts from outside ulpgauge:
//! IEEE 754-2019 §7.4 (overflow: 1/x rounds to +inf in round-to-nearest once 1/x ≥ 2^128, i.e.
//! for 0 < x ≤ 2^-128), the Intel SDM vol. 1 §10.2.3 MXCSR layout (FTZ bit 15, DAZ bit 6,
//! RC bits 13–14 with 11 = toward zero; from memory), and the compiler's own output (objdump
//! shows whether a build fused its multiply-adds).

mod kernel_support;

use kernel_support::kernels;
use serde_json::Value;
use std::path::{Path, PathBuf};
use std::process::Command;

fn ulpgauge(args: &[&str]) -> (i32, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(args)
        .output()
        .expect("run ulpgauge");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn tmp(name: &str) -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join(format!("fpenv-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("tmp dir");
    dir.join(name)
}

fn json(path: &Path) -> Value {
    serde_json::from_str(&std::fs::read_to_string(path).expect("report")).expect("JSON")
}

fn bits(v: &Value) -> u32 {
    u32::from_str_radix(
        v["bits"].as_str().expect("bits").trim_start_matches("0x"),
        16,
    )
    .expect("hex")
}

/// The inputs a check compares (measured and probes) for a function over f32 and a range.
fn compared_inputs(function: &str, range: Option<&str>) -> Vec<u32> {
    use ulpgauge::cli::check::{build_config, KernelTarget};
    let mut args = ulpgauge::cli::check_args::defaults();
    args.sweep_options.range = range.map(str::to_string);
    let target = KernelTarget {
        library: None,
        symbol: None,
        function: function.to_string(),
        format: "f32".to_string(),
        input_format: None,
        role: ulpgauge::check::CheckRole::Forward,
        params: Vec::new(),
    };
    let config = build_config(&target, &args).expect("config");
    let (plan, probes) = ulpgauge::check::planned_inputs(&config).expect("plan");
    let mut all: Vec<u32> = plan.measured.iter().chain(probes).collect();
    all.sort_unstable();
    all.dedup();
    all
}

#[cfg(target_arch = "x86_64")]
#[test]
fn ftz_daz_turns_the_rcp_softsign_from_fail_to_pass_and_says_why() {
    let lib = kernels().join("liblumen_env.so");
    let out = tmp("softsign.json");
    let (code, err) = ulpgauge(&[
        "check",
        "--lib",
        lib.to_str().unwrap(),
        "--symbol",
        "lumen_softsign_f32_rcp",
        "--function",
        "softsign",
        "--format",
        "f32",
        "--caller-fpenv",
        "ftz,daz",
        "--json",
        out.to_str().unwrap(),
        "--quiet",
        "--no-progress",
    ]);
    assert_eq!(code, 0, "{err}");
    let r = json(&out);
    let env = &r["caller_fpenv"];
    // SDM: FTZ is bit 15 and DAZ bit 6 of MXCSR; the default word is 0x1f80.
    assert_eq!(env["default_word"], "0x1f80");
    assert_eq!(env["caller_word"], "0x9fc0");
    assert_eq!(env["default_verdict"]["exit_code"], 1);
    assert_eq!(env["verdict_changed"], true);
    assert!(env["message"]
        .as_str()
        .unwrap()
        .contains("the verdict changed from fail"));
    // IEEE 754: with DAZ off, 1/|x| overflows exactly for 0 < |x| <= 2^-128 (bits 1..=0x200000),
    // the Newton step makes NaN of it; with DAZ on those inputs are zero and returned as is.
    let nan_set = |b: u32| (1..=0x0020_0000).contains(&(b & 0x7fff_ffff));
    let expected = compared_inputs("softsign", None)
        .into_iter()
        .filter(|&b| nan_set(b))
        .count() as u64;
    let o = &env["outputs"];
    assert!(expected > 0);
    assert_eq!(o["differing"].as_u64(), Some(expected));
    assert_eq!(o["at_subnormal_inputs"].as_u64(), Some(expected));
    for d in o["first_differences"].as_array().unwrap() {
        let x = bits(&d["input"]);
        assert!(nan_set(x), "{d}");
        assert_eq!(d["first"]["value"], "nan", "{d}");
        assert_eq!(bits(&d["second"]), x, "{d}");
    }
    // The hygiene check compares against the caller's word, not the default.
    let fpe = r["hygiene"]
        .as_array()
        .unwrap()
        .iter()
        .find(|h| h["check"] == "fp-environment")
        .expect("fp-environment check");
    assert_eq!(fpe["passed"], true, "{fpe}");
    assert!(fpe["detail"].as_str().unwrap().contains("0x9fc0"), "{fpe}");
}

#[cfg(target_arch = "x86_64")]
#[test]
fn a_rounding_mode_sets_the_rounding_control_bits() {
    let lib = kernels().join("liblumen_env.so");
    let out = tmp("toward-zero.json");
    let (code, err) = ulpgauge(&[
        "check",
        "--lib",
        lib.to_str().unwrap(),
        "--symbol",
        "lumen_silu_f32_sse2",
        "--function",
        "silu",
        "--format",
        "f32",
        "--range=1,2",
        "--caller-fpenv",
        "toward-zero",
        "--json",
        out.to_str().unwrap(),
        "--quiet",
        "--no-progress",
    ]);
    assert!(code == 0 || code == 1, "{err}");
    let env = &json(&out)["caller_fpenv"];
    // SDM: RC = 11b (toward zero) in bits 13-14.
    assert_eq!(env["caller_word"], "0x7f80");
    // Rounding toward zero changes some results of a kernel that rounds to nearest inside.
    assert!(env["outputs"]["differing"].as_u64().unwrap() > 0, "{env}");
}

#[test]
fn bad_environments_and_masks_are_bad_input() {
    let lib = kernels().join("liblumen_env.so");
    let base = [
        "check",
        "--lib",
        lib.to_str().unwrap(),
        "--symbol",
        "lumen_silu_f32_sse2",
        "--function",
        "silu",
        "--format",
        "f32",
        "--quiet",
    ];
    for extra in [
        ["--caller-fpenv", "ftz,fast"],
        ["--caller-fpenv", "up,down"],
        ["--caller-fpenv", "ftz,,daz"],
        ["--cpu-mask", "AVX2"],
        ["--cpu-mask", "-AVX2;rm"],
    ] {
        let mut args = base.to_vec();
        args.extend(extra);
        let (code, err) = ulpgauge(&args);
        assert_eq!(code, 2, "{extra:?}: {err}");
        assert_eq!(err.trim().lines().count(), 1, "{extra:?}: {err}");
    }
}

const PADE_TANH: &str = r#"
#include <stddef.h>
__attribute__((visibility("default"))) void NAME(const float *x, float *y, size_t n) {
    for (size_t i = 0; i < n; i++) {
        float v = x[i], v2 = v * v;
        y[i] = v * (27.0f + v2) / (27.0f + 9.0f * v2);
    }
}
"#;

/// Builds the Padé tanh twice, with -mfma and with -mno-fma (contraction allowed in both),
/// into one library; returns it, or `None` without a C compiler.
fn two_builds() -> Option<PathBuf> {
    let src = tmp("pade.c");
    std::fs::write(&src, PADE_TANH).unwrap();
    let mut objects = Vec::new();
    for (name, flag) in [("pade_tanh_fma", "-mfma"), ("pade_tanh_nofma", "-mno-fma")] {
        let obj = tmp(&format!("{name}.o"));
        let ok = Command::new("cc")
            .args(["-O2", "-fPIC", "-ffp-contract=fast", flag, "-c"])
            .arg(format!("-DNAME={name}"))
            .arg(&src)
            .arg("-o")
            .arg(&obj)
            .status()
            .ok()?
            .success();
        assert!(ok, "cc {flag}");
        objects.push(obj);
    }
    let lib = tmp("libpade.so");
    let ok = Command::new("cc")
        .arg("-shared")
        .args(&objects)
        .arg("-o")
        .arg(&lib)
        .status()
        .ok()?
        .success();
    assert!(ok, "cc -shared");
    // The compiler's own output: only the -mfma build fuses.
    if let Ok(out) = Command::new("objdump").arg("-d").args(&objects).output() {
        let text = String::from_utf8_lossy(&out.stdout);
        let (fma, nofma) = text.split_at(text.find("pade_tanh_nofma.o").unwrap_or(0));
        assert!(
            fma.contains("vfmadd") || fma.contains("vfmsub"),
            "no FMA in the -mfma build"
        );
        assert!(!nofma.contains("vfmadd"), "FMA in the -mno-fma build");
    }
    Some(lib)
}

/// Calls a symbol of a library in this process (the oracle is not ulpgauge's runner).
fn call_direct(lib: &Path, symbol: &str, x: &[u32]) -> Vec<u32> {
    use std::ffi::CString;
    let path = CString::new(lib.to_str().unwrap()).unwrap();
    let name = CString::new(symbol).unwrap();
    // SAFETY: the library is the test's own build; the symbol has the forward f32 shape.
    unsafe {
        let h = libc::dlopen(path.as_ptr(), libc::RTLD_NOW | libc::RTLD_LOCAL);
        assert!(!h.is_null(), "dlopen");
        let f = libc::dlsym(h, name.as_ptr());
        assert!(!f.is_null(), "dlsym {symbol}");
        let f: extern "C" fn(*const f32, *mut f32, usize) = std::mem::transmute(f);
        let xs: Vec<f32> = x.iter().map(|&b| f32::from_bits(b)).collect();
        let mut ys = vec![0f32; xs.len()];
        f(xs.as_ptr(), ys.as_mut_ptr(), xs.len());
        ys.iter().map(|y| y.to_bits()).collect()
    }
}

#[cfg(target_arch = "x86_64")]
#[test]
fn a_library_built_with_and_without_fma_disagrees_as_variants() {
    kernels(); // sets the worker executable
    let Some(lib) = two_builds() else {
        eprintln!("no C compiler: skipped");
        return;
    };
    let manifest = tmp("pade.toml");
    std::fs::write(
        &manifest,
        format!(
            "library = {:?}\n[[kernel]]\nvariants = [\"pade_tanh_fma\", \"pade_tanh_nofma\"]\nfunction = \"tanh\"\nformat = \"f32\"\n",
            lib.to_str().unwrap()
        ),
    )
    .unwrap();
    let out = tmp("pade.json");
    let (code, err) = ulpgauge(&[
        "check",
        "--manifest",
        manifest.to_str().unwrap(),
        "--range=-3,3",
        "--json",
        out.to_str().unwrap(),
        "--quiet",
        "--no-progress",
    ]);
    assert_eq!(code, 1, "{err}");
    let r = json(&out);
    let kernels = r["kernels"].as_array().unwrap();
    assert_eq!(kernels.len(), 2);
    let v = &kernels[0]["variants"];
    assert_eq!(v["agree"], false);
    assert_eq!(v["variants"].as_array().unwrap().len(), 2);
    let o = &v["pairs"][0]["outputs"];
    // The oracle: both symbols called directly on the same inputs.
    let xs = compared_inputs("tanh", Some("-3,3"));
    let a = call_direct(&lib, "pade_tanh_fma", &xs);
    let b = call_direct(&lib, "pade_tanh_nofma", &xs);
    let differ: Vec<u32> = xs
        .iter()
        .zip(a.iter().zip(&b))
        .filter(|(_, (p, q))| {
            p != q && !(f32::from_bits(**p).is_nan() && f32::from_bits(**q).is_nan())
        })
        .map(|(x, _)| *x)
        .collect();
    assert!(!differ.is_empty());
    assert_eq!(o["compared"].as_u64(), Some(xs.len() as u64));
    assert_eq!(o["differing"].as_u64(), Some(differ.len() as u64));
    let first = &o["first_differences"][0];
    assert_eq!(bits(&first["input"]), differ[0]);
    let i = xs.iter().position(|&x| x == differ[0]).unwrap();
    assert_eq!(bits(&first["first"]), a[i]);
    assert_eq!(bits(&first["second"]), b[i]);
    assert!(kernels[0]["verdict"]["failed"]
        .as_array()
        .unwrap()
        .iter()
        .any(|f| f
            .as_str()
            .unwrap()
            .contains("pade_tanh_nofma differs from pade_tanh_fma")));
}

#[cfg(target_arch = "x86_64")]
#[test]
fn certify_requires_the_same_verdict_in_the_callers_environment() {
    let lib = kernels().join("liblumen_env.so");
    let spec = tmp("same-verdict.toml");
    let cert = tmp("same-verdict.json");
    let write = |symbol: &str| {
        std::fs::write(
            &spec,
            format!(
                "[kernel]\nlibrary = {:?}\nsymbol = \"{symbol}\"\nfunction = \"softsign\"\nformat = \"f32\"\n\
                 [sweep]\nkind = [\"dense\", \"edge\"]\npoints = 16\n\
                 [require]\nno_spurious_overflow = true\nsame_verdict_in = \"ftz,daz\"\n",
                lib.to_str().unwrap()
            ),
        )
        .unwrap()
    };
    let run = || {
        ulpgauge(&[
            "certify",
            "--spec",
            spec.to_str().unwrap(),
            "--json",
            cert.to_str().unwrap(),
        ])
    };
    write("lumen_softsign_f32_rcp");
    let (code, err) = run();
    assert_eq!(code, 1, "{err}");
    let c = json(&cert);
    let same = c["requirements"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["key"] == "require.same_verdict_in")
        .expect("the requirement")
        .clone();
    assert_eq!(same["passed"], false, "{same}");
    assert!(same["detail"]
        .as_str()
        .unwrap()
        .contains("require.no_spurious_overflow fails by default and passes in ftz,daz"));
    // A bad environment names the key.
    std::fs::write(
        &spec,
        std::fs::read_to_string(&spec)
            .unwrap()
            .replace("ftz,daz", "ftz,turbo"),
    )
    .unwrap();
    let (code, err) = run();
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("same_verdict_in"), "{err}");
}

#[cfg(target_arch = "x86_64")]
#[test]
fn the_fp_environment_hygiene_check_compares_against_the_callers_word() {
    // lumen_fastmath.c's constructor ORs FTZ|DAZ (0x8040) into MXCSR at load time.
    let lib = kernels().join("liblumen_fastmath.so");
    let fp_check = |env: &str| {
        let out = tmp(&format!("fast-{env}.json"));
        let (code, err) = ulpgauge(&[
            "check",
            "--lib",
            lib.to_str().unwrap(),
            "--symbol",
            "lumen_sigmoid_f32_fast",
            "--function",
            "sigmoid",
            "--format",
            "f32",
            "--range=1,2",
            "--caller-fpenv",
            env,
            "--json",
            out.to_str().unwrap(),
            "--quiet",
            "--no-progress",
        ]);
        assert!(code == 0 || code == 1, "{err}");
        json(&out)["hygiene"]
            .as_array()
            .unwrap()
            .iter()
            .find(|h| h["check"] == "fp-environment")
            .expect("fp-environment check")
            .clone()
    };
    // A caller already running with FTZ and DAZ sees no change at load.
    let same = fp_check("ftz,daz");
    assert_eq!(same["passed"], true, "{same}");
    // A caller rounding upward (RC = 10b: 0x1f80 | 0x4000) sees FTZ and DAZ switched on.
    let up = fp_check("up");
    assert_eq!(up["passed"], false, "{up}");
    let detail = up["detail"].as_str().unwrap();
    assert!(detail.contains("0x5f80 -> 0xdfc0"), "{detail}");
    assert!(
        detail.contains("FTZ on") && detail.contains("DAZ on"),
        "{detail}"
    );
}

#[test]
fn manifest_variants_and_environments_are_validated_before_any_work() {
    let lib = kernels().join("liblumen_env.so");
    let manifest = tmp("bad-entry.toml");
    for (entry, key) in [
        (
            "symbol = \"lumen_silu_f32\"\nvariants = [\"lumen_silu_f32_sse2\"]",
            "`variants`",
        ),
        ("function = \"silu\"", "neither `symbol` nor `variants`"),
        (
            "variants = [\"lumen_silu_f32_sse2\", \"lumen_silu_f32_avx9\"]",
            "lumen_silu_f32_avx9",
        ),
        (
            "symbol = \"lumen_silu_f32\"\ncaller-fpenv = \"ftz,warp\"",
            "`caller-fpenv`",
        ),
    ] {
        let function = if entry.contains("function") {
            ""
        } else {
            "function = \"silu\"\n"
        };
        std::fs::write(
            &manifest,
            format!(
                "library = {:?}\n[[kernel]]\n{entry}\n{function}format = \"f32\"\n",
                lib.to_str().unwrap()
            ),
        )
        .unwrap();
        let (code, err) = ulpgauge(&["check", "--manifest", manifest.to_str().unwrap(), "--quiet"]);
        assert_eq!(code, 2, "{entry}: {err}");
        assert!(err.contains(key), "{entry}: {err}");
        assert_eq!(err.trim().lines().count(), 1, "{err}");
    }
}
