//! The FP control state: MXCSR on x86-64, FPCR on AArch64; reading it and naming what changed.

/// The current control word, or `None` on an architecture ulpgauge cannot read.
pub fn read() -> Option<u32> {
    imp::read()
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
    pub fn read() -> Option<u32> {
        None
    }
}
