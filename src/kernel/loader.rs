//! Checks a kernel library without running its code, and opens it (in the worker only).
//!
//! The main process never loads the library: loading runs constructors, which is exactly what
//! the worker is there to contain.  [`validate`] reads the file as data instead.

use object::{
    Object, ObjectKind, ObjectSection, ObjectSegment, ObjectSymbol, SectionKind, SegmentFlags,
    SymbolKind,
};
use std::ffi::c_void;
use std::path::Path;

/// Checks that `path` is a shared library for this machine that exports `symbol` as code (a
/// function in an executable section: calling anything else fails on every call); the error is
/// one line naming the file (and the symbol).
pub fn validate(path: &Path, symbol: &str) -> Result<(), String> {
    let shown = path.display();
    let data = std::fs::read(path).map_err(|e| match e.kind() {
        std::io::ErrorKind::NotFound => format!("kernel library {shown}: no such file"),
        _ => format!("kernel library {shown}: cannot read: {e}"),
    })?;
    let file = object::File::parse(&*data).map_err(|_| {
        format!("kernel library {shown}: not a shared library (not an object file)")
    })?;
    if file.kind() != ObjectKind::Dynamic {
        return Err(format!(
            "kernel library {shown}: not a shared library (it is {})",
            kind_name(file.kind())
        ));
    }
    let here = host_architecture();
    if Some(file.architecture()) != here {
        return Err(format!(
            "kernel library {shown}: built for {:?}, this machine is {}",
            file.architecture(),
            std::env::consts::ARCH
        ));
    }
    let exports = file
        .exports()
        .map_err(|e| format!("kernel library {shown}: cannot read its symbol table: {e}"))?;
    let names: Vec<String> = exports
        .iter()
        .map(|e| String::from_utf8_lossy(e.name()).into_owned())
        .collect();
    // Mach-O prefixes C symbols with an underscore.
    let found = names
        .iter()
        .any(|n| n == symbol || n.strip_prefix('_') == Some(symbol));
    if !found {
        // The nearest five by edit distance, so a library of many kernels still suggests the
        // one that was meant.
        let mut similar: Vec<&String> = names
            .iter()
            .filter(|n| {
                n.contains(symbol) || symbol.contains(n.as_str()) || shares_prefix(n, symbol)
            })
            .collect();
        similar.sort_by_key(|n| (edit_distance(n, symbol), n.as_str()));
        similar.truncate(5);
        similar.sort();
        let hint = if similar.is_empty() {
            String::new()
        } else {
            let list: Vec<&str> = similar.iter().map(|s| s.as_str()).collect();
            format!(" (similar: {})", list.join(", "))
        };
        return Err(format!(
            "kernel library {shown}: does not export symbol '{symbol}'{hint}"
        ));
    }
    check_code(&file, symbol)
        .map_err(|why| format!("kernel library {shown}: symbol '{symbol}' {why}"))
}

/// Fails unless the symbol is a function (or untyped) and lies in executable code; the error
/// completes "symbol 'NAME' …".
fn check_code(file: &object::File, symbol: &str) -> Result<(), String> {
    let named = |s: &object::Symbol| {
        s.is_definition()
            && s.name()
                .is_ok_and(|n| n == symbol || n.strip_prefix('_') == Some(symbol))
    };
    let Some(sym) = file
        .dynamic_symbols()
        .find(named)
        .or_else(|| file.symbols().find(named))
    else {
        // Exported without a symbol-table entry to inspect (a Mach-O export trie).
        return Ok(());
    };
    // Hand-written assembly often leaves symbols untyped; where they live decides then.
    let what = match sym.kind() {
        SymbolKind::Text | SymbolKind::Unknown => None,
        SymbolKind::Data => Some("a data object"),
        SymbolKind::Tls => Some("a thread-local variable"),
        SymbolKind::Section => Some("a section"),
        SymbolKind::File => Some("a file name"),
        _ => Some("not code"),
    };
    if let Some(what) = what {
        return Err(format!("is {what}, not a function"));
    }
    let executable = match sym.section_index() {
        Some(i) => file
            .section_by_index(i)
            .is_ok_and(|s| s.kind() == SectionKind::Text),
        // No section (an absolute symbol, or section headers stripped): ask the segments.
        None => file.segments().any(|seg| {
            let (start, size) = (seg.address(), seg.size());
            let inside = sym.address() >= start && sym.address() - start < size;
            let exec = match seg.flags() {
                SegmentFlags::Elf { p_flags } => p_flags & object::elf::PF_X != 0,
                _ => true,
            };
            inside && exec
        }),
    };
    if !executable {
        return Err("is not in an executable section, so it cannot be a function".to_string());
    }
    Ok(())
}

fn shares_prefix(a: &str, b: &str) -> bool {
    let common = a.bytes().zip(b.bytes()).take_while(|(x, y)| x == y).count();
    common >= 6
}

fn kind_name(kind: ObjectKind) -> &'static str {
    match kind {
        ObjectKind::Executable => "an executable",
        ObjectKind::Relocatable => "a relocatable object file",
        ObjectKind::Core => "a core dump",
        _ => "an unknown kind of object file",
    }
}

fn host_architecture() -> Option<object::Architecture> {
    use object::Architecture as A;
    match std::env::consts::ARCH {
        "x86_64" => Some(A::X86_64),
        "aarch64" => Some(A::Aarch64),
        "x86" => Some(A::I386),
        "arm" => Some(A::Arm),
        "riscv64" => Some(A::Riscv64),
        "powerpc64" => Some(A::PowerPc64),
        "s390x" => Some(A::S390x),
        "loongarch64" => Some(A::LoongArch64),
        _ => None,
    }
}

/// An opened library and the address of the kernel symbol in it.
pub struct Loaded {
    /// Keeps the library mapped while the symbol is used.
    _library: libloading::Library,
    /// The kernel's address.
    pub symbol: *const c_void,
}

/// Opens the library (running its constructors) and looks the symbol up.
pub fn open(path: &Path, symbol: &str) -> Result<Loaded, String> {
    // SAFETY: loading runs the library's initialisers; this happens only in the worker process,
    // which exists to contain whatever they do.
    let library = unsafe { libloading::Library::new(path) }
        .map_err(|e| one_line(&format!("kernel library {}: {e}", path.display())))?;
    // SAFETY: the symbol is only turned into an address here; the caller casts it per the ABI.
    let address = unsafe { library.get::<*const c_void>(symbol.as_bytes()) }
        .map(|s| *s)
        .map_err(|e| {
            one_line(&format!(
                "kernel library {}: symbol '{symbol}': {e}",
                path.display()
            ))
        })?;
    Ok(Loaded {
        _library: library,
        symbol: address,
    })
}

fn one_line(text: &str) -> String {
    text.split_whitespace().collect::<Vec<_>>().join(" ")
}

/// Levenshtein distance in characters (the names are short).
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut diagonal = row[0];
        row[0] = i + 1;
        for (j, &cb) in b.iter().enumerate() {
            let above = row[j + 1];
            row[j + 1] = (diagonal + usize::from(ca != cb))
                .min(above + 1)
                .min(row[j] + 1);
            diagonal = above;
        }
    }
    row[b.len()]
}
