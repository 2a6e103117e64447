//! Bad input: missing file, not a library, wrong architecture, missing symbol, manifest errors.
//! Each is one line naming the file and the key, symbol or line.

mod kernel_support;

use kernel_support::*;
use ulpgauge::kernel::{load_manifest, Runner};

fn start_err(spec: &ulpgauge::kernel::KernelSpec) -> String {
    match Runner::start(spec, options()) {
        Ok(_) => panic!("{} started", spec.symbol),
        Err(e) => {
            assert!(!e.contains('\n'), "not one line: {e}");
            e
        }
    }
}

#[test]
fn missing_file() {
    let s = spec("libnothere.so", "k", "relu", "f32");
    let e = start_err(&s);
    assert!(
        e.contains("libnothere.so") && e.ends_with("no such file"),
        "{e}"
    );
}

#[test]
fn not_a_shared_library() {
    let path = kernels().join("notes.so");
    std::fs::write(&path, "just text\n").unwrap();
    let e = start_err(&spec("notes.so", "k", "relu", "f32"));
    assert!(
        e.contains("notes.so") && e.contains("not a shared library"),
        "{e}"
    );
}

#[test]
fn object_file_is_not_a_shared_library() {
    let dir = kernels();
    let src = dir.join("obj.c");
    std::fs::write(&src, "void k(void) {}\n").unwrap();
    let obj = dir.join("obj.o");
    assert!(std::process::Command::new("cc")
        .args(["-c", "-o"])
        .arg(&obj)
        .arg(&src)
        .status()
        .unwrap()
        .success());
    let e = start_err(&spec("obj.o", "k", "relu", "f32"));
    assert!(
        e.contains("not a shared library (it is a relocatable object file)"),
        "{e}"
    );
}

#[test]
fn wrong_architecture() {
    // Patch e_machine (ELF header offset 18, little-endian u16) to EM_AARCH64 = 183, or to
    // EM_X86_64 = 62 on an AArch64 host (values from the System V ABI, from memory).
    let dir = kernels();
    let mut bytes = std::fs::read(dir.join("liblumen_edge.so")).unwrap();
    let other: u16 = if cfg!(target_arch = "x86_64") {
        183
    } else {
        62
    };
    bytes[18..20].copy_from_slice(&other.to_le_bytes());
    std::fs::write(dir.join("libforeign.so"), bytes).unwrap();
    let e = start_err(&spec("libforeign.so", "lumen_tanh_f32", "tanh", "f32"));
    assert!(e.contains("libforeign.so: built for"), "{e}");
    assert!(e.contains(std::env::consts::ARCH), "{e}");
}

#[test]
fn missing_symbol() {
    let e = start_err(&spec("liblumen_edge.so", "lumen_tanh_f64", "tanh", "f32"));
    assert!(
        e.contains("liblumen_edge.so") && e.contains("does not export symbol 'lumen_tanh_f64'"),
        "{e}"
    );
    assert!(e.contains("lumen_tanh_f32"), "suggests a near name: {e}");
}

fn manifest_err(body: &str) -> String {
    let path = kernels().join(format!("m{}.toml", body.len()));
    std::fs::write(&path, body).unwrap();
    let e = load_manifest(&path).expect_err("manifest accepted");
    assert!(!e.contains('\n'), "not one line: {e}");
    assert!(
        e.contains(&path.display().to_string()),
        "names the file: {e}"
    );
    e
}

const HEAD: &str = "library = \"liblumen_edge.so\"\n\n[[kernel]]\nsymbol = \"lumen_tanh_f32\"\n";

#[test]
fn manifest_unknown_key() {
    let e = manifest_err(&format!(
        "{HEAD}function = \"tanh\"\nformat = \"f32\"\ncolour = \"red\"\n"
    ));
    assert!(
        e.contains("line 7") && e.contains("unknown field `colour`"),
        "{e}"
    );
}

#[test]
fn manifest_wrong_type() {
    let e = manifest_err(&format!(
        "{HEAD}function = \"tanh\"\nformat = \"f32\"\nin-place = \"yes\"\n"
    ));
    assert!(
        e.contains("line 7") && e.contains("expected a boolean"),
        "{e}"
    );
}

#[test]
fn manifest_unknown_function() {
    let e = manifest_err(&format!("{HEAD}function = \"tanhh\"\nformat = \"f32\"\n"));
    assert!(
        e.contains("line 5: key `function`: unknown function 'tanhh'"),
        "{e}"
    );
}

#[test]
fn manifest_unknown_format_role_and_param() {
    let e = manifest_err(&format!("{HEAD}function = \"tanh\"\nformat = \"f64\"\n"));
    assert!(
        e.contains("line 6: key `format`: unknown format 'f64'"),
        "{e}"
    );
    let e = manifest_err(&format!(
        "{HEAD}function = \"tanh\"\nformat = \"f32\"\nrole = \"backward\"\n"
    ));
    assert!(
        e.contains("line 7") && e.contains("unknown variant `backward`"),
        "{e}"
    );
    let e = manifest_err(&format!(
        "{HEAD}function = \"elu\"\nformat = \"f32\"\nparams = {{ beta = \"2\" }}\n"
    ));
    assert!(
        e.contains("line 7: key `params.beta`: elu has no parameter 'beta'"),
        "{e}"
    );
    let e = manifest_err(&format!("{HEAD}function = \"tanh\"\n"));
    assert!(
        e.contains("line 3: kernel entry has no `format` (or `input-format` and `output-format`)"),
        "{e}"
    );
}

#[test]
fn manifest_good_entry_resolves_relative_library() {
    let path = kernels().join("ok.toml");
    std::fs::write(
        &path,
        format!("{HEAD}function = \"tanh\"\nformat = \"f32\"\nthread-safe = false\n"),
    )
    .unwrap();
    let specs = load_manifest(&path).unwrap();
    assert_eq!(specs[0].library, kernels().join("liblumen_edge.so"));
    assert!(!specs[0].thread_safe && !specs[0].in_place);
}
