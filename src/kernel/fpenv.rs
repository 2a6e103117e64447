//! The FP control state: MXCSR on x86-64, FPCR on AArch64; reading it and naming what changed.

/// The current control word, or `None` on an architecture ulpgauge cannot read.
pub fn read() -> Option<u32> {
    imp::read()
}

/// Sets the control word (the calling thread's); false on an architecture ulpgauge cannot set.
pub fn write(word: u32) -> bool {
    imp::write(word)
}

/// "MXCSR", "FPCR" or "control register".
pub fn register_name() -> &'static str {
    imp::REGISTER
}

/// Names accepted by `--caller-fpenv`, for its error message and help.
pub const CALLER_NAMES: &str = "ftz, daz, nearest, down, up, toward-zero";

/// The control word a caller's environment gives, starting from `base` (the default word):
/// `list` is comma-separated from `ftz` (results that would be subnormal become zero), `daz`
/// (subnormal operands read as zero) and at most one rounding mode (`nearest`, `down` toward
/// −∞, `up` toward +∞, `toward-zero`).  On AArch64 both `ftz` and `daz` set FPCR.FZ, which does
/// both.
pub fn caller_word(base: u32, list: &str) -> Result<u32, String> {
    let mut word = control_bits(base);
    let mut rounding: Option<&str> = None;
    for name in list.split(',').map(str::trim) {
        match name {
            "ftz" => word |= 1 << imp::FTZ_BIT,
            "daz" => word |= 1 << imp::DAZ_BIT,
            "nearest" | "down" | "up" | "toward-zero" => {
                if let Some(earlier) = rounding {
                    return Err(format!(
                        "--caller-fpenv names two rounding modes ({earlier}, {name})"
                    ));
                }
                rounding = Some(name);
                let (shift, modes) = imp::ROUNDING;
                let code = modes.iter().position(|m| *m == name).unwrap_or(0) as u32;
                word = (word & !(3 << shift)) | code << shift;
            }
            "" => return Err("--caller-fpenv has an empty entry".to_string()),
            other => {
                return Err(format!(
                    "--caller-fpenv: unknown entry '{other}' (known: {CALLER_NAMES})"
                ))
            }
        }
    }
    Ok(word)
}

/// Sticky status flags live in MXCSR too; they change with ordinary arithmetic, so they are not
/// part of the control state compared.
pub fn control_bits(word: u32) -> u32 {
    if cfg!(target_arch = "x86_64") {
        word & !0x3f
    } else {
        word
    }
}

/// Names the control bits that differ, e.g. "FTZ on, DAZ on (MXCSR 0x1f80 -> 0x9fc0)".
pub fn describe_change(before: u32, after: u32) -> String {
    let mut parts = Vec::new();
    for &(bit, name) in imp::NAMED_BITS {
        let (b, a) = (before >> bit & 1, after >> bit & 1);
        if a != b {
            parts.push(format!("{name} {}", if a == 1 { "on" } else { "off" }));
        }
    }
    let (shift, modes) = imp::ROUNDING;
    let (rb, ra) = ((before >> shift) & 3, (after >> shift) & 3);
    if rb != ra {
        parts.push(format!(
            "rounding mode {} -> {}",
            modes[rb as usize], modes[ra as usize]
        ));
    }
    let named: u32 = imp::NAMED_BITS.iter().map(|(b, _)| 1 << b).sum::<u32>() | 3 << shift;
    let other = (control_bits(before) ^ control_bits(after)) & !named;
    if other != 0 {
        parts.push(format!("other bits 0x{other:x}"));
    }
    format!(
        "{} ({} 0x{before:04x} -> 0x{after:04x})",
        parts.join(", "),
        imp::REGISTER
    )
}

#[cfg(target_arch = "x86_64")]
mod imp {
    /// MXCSR bits, from the Intel SDM vol. 1 §10.2.3 (from memory).
    pub const NAMED_BITS: &[(u32, &str)] = &[
        (15, "FTZ"),
        (6, "DAZ"),
        (7, "invalid-operation mask"),
        (8, "denormal mask"),
        (9, "divide-by-zero mask"),
        (10, "overflow mask"),
        (11, "underflow mask"),
        (12, "precision mask"),
    ];
    pub const ROUNDING: (u32, [&str; 4]) = (13, ["nearest", "down", "up", "toward-zero"]);
    pub const REGISTER: &str = "MXCSR";
    pub const FTZ_BIT: u32 = 15;
    pub const DAZ_BIT: u32 = 6;
    pub fn write(word: u32) -> bool {
        // SAFETY: ldmxcsr loads MXCSR from the given address; the word comes from a read MXCSR
        // with only named control bits changed, so no reserved bit is set (which would fault).
        unsafe { std::arch::asm!("ldmxcsr [{}]", in(reg) &word, options(nostack)) };
        true
    }
    pub fn read() -> Option<u32> {
        let mut word: u32 = 0;
        // SAFETY: stmxcsr stores the 32-bit MXCSR to the given address; no other effect.
        unsafe { std::arch::asm!("stmxcsr [{}]", in(reg) &mut word, options(nostack)) };
        Some(word)
    }
}

#[cfg(target_arch = "aarch64")]
mod imp {
    /// FPCR bits, from the Arm ARM (from memory).
    pub const NAMED_BITS: &[(u32, &str)] = &[(24, "FZ"), (25, "DN"), (26, "AHP"), (19, "FZ16")];
    pub const ROUNDING: (u32, [&str; 4]) = (22, ["nearest", "up", "down", "toward-zero"]);
    pub const REGISTER: &str = "FPCR";
    pub const FTZ_BIT: u32 = 24;
    pub const DAZ_BIT: u32 = 24;
    pub fn write(word: u32) -> bool {
        // SAFETY: writing FPCR changes only the FP control state of this thread.
        unsafe { std::arch::asm!("msr fpcr, {}", in(reg) word as u64, options(nomem, nostack)) };
        true
    }
    pub fn read() -> Option<u32> {
        let word: u64;
        // SAFETY: reading FPCR has no side effect.
        unsafe { std::arch::asm!("mrs {}, fpcr", out(reg) word, options(nomem, nostack)) };
        Some(word as u32)
    }
}

#[cfg(not(any(target_arch = "x86_64", target_arch = "aarch64")))]
mod imp {
    pub const NAMED_BITS: &[(u32, &str)] = &[];
    pub const ROUNDING: (u32, [&str; 4]) = (0, ["?", "?", "?", "?"]);
    pub const REGISTER: &str = "control register";
    pub const FTZ_BIT: u32 = 0;
    pub const DAZ_BIT: u32 = 0;
    pub fn write(_word: u32) -> bool {
        false
    }
    pub fn read() -> Option<u32> {
        None
    }
}
