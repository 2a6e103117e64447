//! `ulpgauge certify` end to end on the Lumen Edge demo kernels: a good kernel passes, faulty
//! ones fail, a bad spec exits 2 naming the key, a crashing kernel exits 3.

mod kernel_support;

use kernel_support::kernels;
use std::path::{Path, PathBuf};
use std::process::Command;

fn dir(name: &str) -> PathBuf {
    let d = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .join(format!("certify-{name}-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Writes a spec and runs certify on it; returns (status, stdout, stderr, certificate JSON).
fn certify(name: &str, spec: &str) -> (i32, String, String, Option<serde_json::Value>) {
    let d = dir(name);
    let path = d.join("spec.toml");
    std::fs::write(&path, spec).unwrap();
    let cert = d.join("cert.json");
    let out = Command::new(env!("CARGO_BIN_EXE_ulpgauge"))
        .args(["certify", "--no-progress", "--spec"])
        .arg(&path)
        .arg("--json")
        .arg(&cert)
        .output()
        .expect("run ulpgauge");
    let json = std::fs::read_to_string(&cert)
        .ok()
        .map(|t| serde_json::from_str(&t).expect("certificate is JSON"));
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
        json,
    )
}

fn kernel(lib: &str, symbol: &str, function: &str, format: &str) -> String {
    format!(
        "[kernel]\nlibrary = \"{}\"\nsymbol = \"{symbol}\"\nfunction = \"{function}\"\nformat = \"{format}\"\n",
        kernels().join(lib).display()
    )
}

#[test]
fn minimal_spec_certifies_the_f16_sigmoid_exhaustively() {
    let spec = kernel("liblumen_edge.so", "lumen_sigmoid_f16", "sigmoid", "f16")
        + "\n[require]\nmax_ulp = 1.0\n";
    let (code, stdout, stderr, cert) = certify("good", &spec);
    assert_eq!(code, 0, "{stdout}\n{stderr}");
    assert!(
        stdout.contains("max ulp <= 1") && stdout.contains("pass"),
        "{stdout}"
    );
    let c = cert.expect("certificate written");
    assert_eq!(c["schema"], "ulpgauge-certificate/1");
    assert_eq!(c["verdict"], "pass");
    let r = &c["requirements"][0];
    assert_eq!(r["key"], "require.max_ulp");
    assert_eq!(r["passed"], true);
    assert!(r["measured"].as_f64().unwrap() <= 1.0);
    // IEEE 754-2008 binary16 has 16 bits, so an exhaustive sweep covers 2^16 = 65536 patterns.
    assert_eq!(c["sweep"]["coverage"], "exhaustive");
    assert_eq!(c["sweep"]["inputs"], 65536);
    assert!(c["statement"].as_str().unwrap().starts_with("Exhaustive"));
    let lib = &c["provenance"]["library"];
    assert_eq!(lib["sha256"].as_str().unwrap().len(), 64);
    // build.sh compiles with cc, which is GCC here: GCC writes "GCC: (…) version" into .comment
    // (common practice on ELF toolchains).
    assert!(lib["compiler"].as_str().unwrap().contains("GCC"), "{lib}");
    for key in ["ulpgauge", "mpfr", "gmp", "cpu", "date"] {
        assert!(!c["provenance"][key].is_null(), "provenance.{key}");
    }
}

#[test]
fn faulty_kernels_fail_their_requirements() {
    // The ragged-tail sigmoid computes the last n % 8 elements with a cheaper formula: the tail
    // hygiene check must fail it.
    let spec = kernel("liblumen_faulty.so", "lumen_sigmoid_f32_ragged", "sigmoid", "f32")
        + "\n[sweep]\nkind = [\"dense\", \"edge\"]\npoints = 8\n\n[require]\nhygiene = [\"tail\"]\nnan_propagation = true\n";
    let (code, stdout, stderr, cert) = certify("ragged", &spec);
    assert_eq!(code, 1, "{stdout}\n{stderr}");
    let c = cert.expect("certificate written");
    assert_eq!(c["verdict"], "fail");
    let reqs = c["requirements"].as_array().unwrap();
    let hygiene = reqs.iter().find(|r| r["key"] == "require.hygiene").unwrap();
    assert_eq!(hygiene["passed"], false, "{hygiene}");
    assert!(stdout.contains("FAILED require.hygiene"), "{stdout}");
    // A sampled certificate says it is evidence, not proof.
    assert_eq!(c["sweep"]["coverage"], "sampled");
    assert!(c["statement"].as_str().unwrap().contains("not proof"));

    // The blended f16 ELU returns NaN where e^x overflows binary16 (x >= 11.09375 = 0x498c; the largest
    // binary16 is 65504, IEEE 754-2008), though elu(x) = x is finite there.
    let spec = kernel("liblumen_edge.so", "lumen_elu_f16", "elu", "f16")
        + "\n[require]\nno_spurious_overflow = true\n[[require.range]]\nrange = \"-1,1\"\nmax_ulp = 4\n";
    let (code, stdout, _, cert) = certify("elu", &spec);
    assert_eq!(code, 1, "{stdout}");
    let c = cert.unwrap();
    let r = &c["requirements"][0];
    assert_eq!(r["passed"], false);
    assert!(r["detail"].as_str().unwrap().contains("0x498c"), "{r}");
    assert_eq!(c["ranges"][0]["require_range"], "-1,1");
}

#[test]
fn bad_spec_exits_2_naming_the_key_and_writes_nothing() {
    let base = kernel("liblumen_edge.so", "lumen_sigmoid_f16", "sigmoid", "f16");
    let cases: [(String, &str); 8] = [
        (base.clone() + "[require]\nmaxulp = 1\n", "maxulp"),
        (
            base.clone() + "[require]\nmax_ulp = -1\n",
            "require.max_ulp",
        ),
        (
            base.clone() + "[require]\nmax_ulp = \"one\"\n",
            "require.max_ulp",
        ),
        (base.clone(), "require"),
        (
            base.replace("f16", "f64") + "[require]\nmax_ulp = 1\n",
            "kernel.format",
        ),
        (
            base.clone() + "[sweep]\nrange = \"2,1\"\n[require]\nmax_ulp = 1\n",
            "sweep.range",
        ),
        (
            base.clone() + "[require]\nhygiene = [\"tails\"]\n",
            "require.hygiene",
        ),
        (
            kernel("liblumen_edge.so", "lumen_gelu_bf16", "gelu", "bf16")
                + "[require]\nmonotone = true\n",
            "require.monotone",
        ),
    ];
    for (i, (spec, key)) in cases.iter().enumerate() {
        let (code, _, stderr, cert) = certify(&format!("bad{i}"), spec);
        assert_eq!(code, 2, "case {i}: {stderr}");
        assert_eq!(stderr.trim().lines().count(), 1, "case {i}: {stderr}");
        assert!(stderr.contains(key), "case {i}: expected {key} in {stderr}");
        assert!(cert.is_none(), "case {i} wrote a certificate");
    }
}

#[test]
fn crashing_kernel_exits_3() {
    // lumen_tanh_f16_crash reads a null table at exactly x = 9.0 (0x4880 in binary16).
    let spec = kernel("liblumen_faulty.so", "lumen_tanh_f16_crash", "tanh", "f16")
        + "[kernel.params]\n[require]\nmax_ulp = 1\n";
    let spec = spec.replace("[kernel.params]\n", "");
    let (code, stdout, stderr, cert) = certify("crash", &spec);
    assert_eq!(code, 3, "{stdout}\n{stderr}");
    let c = cert.expect("certificate written");
    assert_eq!(c["verdict"], "crashed");
    assert_eq!(c["crash"]["input"]["bits"], "0x4880");
}
