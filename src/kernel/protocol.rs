//! The byte protocol between the runner and its worker, over the worker's stdin and a private
//! copy of its stdout.  Every field is a little-endian u32 or u64; arrays of bit patterns travel
//! as u32 whatever the format, which keeps one code path (the overhead is measured by the
//! `worker_overhead` benchmark).

use std::io::{self, Read, Write};

/// Request: call the kernel.
pub const OP_CALL: u32 = 1;
/// Request: time the kernel on the given inputs.
pub const OP_BENCH: u32 = 2;
/// Request: exit.
pub const OP_QUIT: u32 = 3;

/// Reply: success.
pub const TAG_OK: u32 = 0;
/// Reply: written by the worker's signal handler just before it dies.
pub const TAG_FAULT: u32 = 2;
/// Reply: the worker could not do what was asked (message follows).
pub const TAG_ERROR: u32 = 3;

/// Where the worker puts the buffers of a call.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Layout {
    /// Ordinary buffers with a page of canary-filled padding on both sides of y, so that an
    /// overrunning kernel still gets its results measured.
    Padded = 0,
    /// y ends exactly where an inaccessible guard page begins; canaries below y.
    GuardAfter = 1,
    /// y starts exactly where an inaccessible guard page ends; canaries above y.
    GuardBefore = 2,
    /// y is x (for kernels declared in-place).
    InPlace = 3,
}

impl Layout {
    fn from_u32(v: u32) -> io::Result<Layout> {
        Ok(match v {
            0 => Layout::Padded,
            1 => Layout::GuardAfter,
            2 => Layout::GuardBefore,
            3 => Layout::InPlace,
            _ => return Err(bad("unknown layout")),
        })
    }
}

/// One call request.
#[derive(Clone, Debug)]
pub struct CallRequest {
    /// Buffer placement.
    pub layout: Layout,
    /// Byte offset of x from a 64-byte boundary (a multiple of the element size).
    pub x_offset: u32,
    /// Byte offset of y from a 64-byte boundary.
    pub y_offset: u32,
    /// Threads calling concurrently, each on the inputs rotated by a different amount.
    pub threads: u32,
    /// Calls per thread.
    pub reps: u32,
    /// x (or y for from-output gradient kernels).
    pub first: Vec<u32>,
    /// g, for gradient kernels.
    pub second: Option<Vec<u32>>,
}

/// What a successful call reports.
#[derive(Clone, Debug)]
pub struct CallReply {
    /// FP control word before and after the (last) call.
    pub env: (u32, u32),
    /// First input element the kernel changed: (array 0 = first / 1 = second, index, new bits).
    pub input_changed: Option<(u32, u32, u32)>,
    /// Byte offset from y[0] of the first damaged canary byte.
    pub canary: Option<i64>,
    /// threads × reps output arrays, each in input order.
    pub outputs: Vec<Vec<u32>>,
}

/// What the signal handler reports before the worker dies.
#[derive(Clone, Copy, Debug)]
pub struct Fault {
    /// Signal number.
    pub signo: i32,
    /// Faulting address (si_addr).
    pub addr: u64,
    /// Whether the address lies in a guard page next to y.
    pub in_guard: bool,
    /// Address of y[0] in the call, 0 when not inside a call.
    pub y_base: u64,
    /// n of the call.
    pub n: u64,
}

/// Appends little-endian fields.
#[derive(Default)]
pub struct Writer(pub Vec<u8>);

impl Writer {
    /// Appends a u32.
    pub fn u32(&mut self, v: u32) -> &mut Self {
        self.0.extend_from_slice(&v.to_le_bytes());
        self
    }
    /// Appends a u64.
    pub fn u64(&mut self, v: u64) -> &mut Self {
        self.0.extend_from_slice(&v.to_le_bytes());
        self
    }
    /// Appends an array of u32.
    pub fn u32s(&mut self, v: &[u32]) -> &mut Self {
        if cfg!(target_endian = "little") {
            // SAFETY: any u32 slice is a valid byte slice of four times the length.
            let bytes = unsafe { std::slice::from_raw_parts(v.as_ptr() as *const u8, v.len() * 4) };
            self.0.extend_from_slice(bytes);
        } else {
            for x in v {
                self.0.extend_from_slice(&x.to_le_bytes());
            }
        }
        self
    }
    /// Appends a length-prefixed string.
    pub fn str(&mut self, s: &str) -> &mut Self {
        self.u32(s.len() as u32);
        self.0.extend_from_slice(s.as_bytes());
        self
    }
    /// Writes everything and flushes.
    pub fn send(&self, out: &mut impl Write) -> io::Result<()> {
        out.write_all(&self.0)?;
        out.flush()
    }
}

/// Reads little-endian fields.
pub struct Reader<'a, R: Read>(pub &'a mut R);

impl<R: Read> Reader<'_, R> {
    /// Reads a u32.
    pub fn u32(&mut self) -> io::Result<u32> {
        let mut b = [0u8; 4];
        self.0.read_exact(&mut b)?;
        Ok(u32::from_le_bytes(b))
    }
    /// Reads a u64.
    pub fn u64(&mut self) -> io::Result<u64> {
        let mut b = [0u8; 8];
        self.0.read_exact(&mut b)?;
        Ok(u64::from_le_bytes(b))
    }
    /// Reads `n` u32.
    pub fn u32s(&mut self, n: usize) -> io::Result<Vec<u32>> {
        let mut v = vec![0u32; n];
        // SAFETY: the u32 buffer viewed as bytes; every byte pattern is a valid u32.
        let bytes = unsafe { std::slice::from_raw_parts_mut(v.as_mut_ptr() as *mut u8, n * 4) };
        self.0.read_exact(bytes)?;
        if cfg!(target_endian = "big") {
            v.iter_mut().for_each(|x| *x = u32::from_le(*x));
        }
        Ok(v)
    }
    /// Reads a length-prefixed string.
    pub fn str(&mut self) -> io::Result<String> {
        let n = self.u32()? as usize;
        let mut b = vec![0u8; n.min(1 << 16)];
        self.0.read_exact(&mut b)?;
        Ok(String::from_utf8_lossy(&b).into_owned())
    }
}

fn bad(what: &str) -> io::Error {
    io::Error::new(io::ErrorKind::InvalidData, what.to_string())
}

/// Encodes a call request.
pub fn encode_call(req: &CallRequest) -> Writer {
    let mut w = Writer::default();
    w.u32(OP_CALL)
        .u32(req.layout as u32)
        .u32(req.x_offset)
        .u32(req.y_offset)
        .u32(req.threads)
        .u32(req.reps)
        .u32(req.first.len() as u32)
        .u32(req.second.is_some() as u32)
        .u32s(&req.first);
    if let Some(s) = &req.second {
        w.u32s(s);
    }
    w
}

/// Decodes a call request after its op code.
pub fn decode_call<R: Read>(r: &mut Reader<R>) -> io::Result<CallRequest> {
    let layout = Layout::from_u32(r.u32()?)?;
    let (x_offset, y_offset, threads, reps) = (r.u32()?, r.u32()?, r.u32()?, r.u32()?);
    let n = r.u32()? as usize;
    let has_second = r.u32()? != 0;
    let first = r.u32s(n)?;
    let second = if has_second { Some(r.u32s(n)?) } else { None };
    Ok(CallRequest {
        layout,
        x_offset,
        y_offset,
        threads: threads.max(1),
        reps: reps.max(1),
        first,
        second,
    })
}

/// Encodes a successful call reply.
pub fn encode_reply(reply: &CallReply) -> Writer {
    let mut w = Writer::default();
    let n = reply.outputs.first().map_or(0, |o| o.len());
    let (which, index, value) = reply.input_changed.unwrap_or((u32::MAX, 0, 0));
    w.u32(TAG_OK)
        .u32(reply.env.0)
        .u32(reply.env.1)
        .u32(which)
        .u32(index)
        .u32(value)
        .u32(reply.canary.is_some() as u32)
        .u64(reply.canary.unwrap_or(0) as u64)
        .u32(reply.outputs.len() as u32)
        .u32(n as u32);
    for o in &reply.outputs {
        w.u32s(o);
    }
    w
}

/// Decodes a call reply after its TAG_OK.
pub fn decode_reply<R: Read>(r: &mut Reader<R>) -> io::Result<CallReply> {
    let env = (r.u32()?, r.u32()?);
    let (which, index, value) = (r.u32()?, r.u32()?, r.u32()?);
    let has_canary = r.u32()? != 0;
    let canary = r.u64()? as i64;
    let copies = r.u32()? as usize;
    let n = r.u32()? as usize;
    let outputs = (0..copies).map(|_| r.u32s(n)).collect::<io::Result<_>>()?;
    Ok(CallReply {
        env,
        input_changed: (which != u32::MAX).then_some((which, index, value)),
        canary: has_canary.then_some(canary),
        outputs,
    })
}

/// Decodes a fault record after its TAG_FAULT.
pub fn decode_fault<R: Read>(r: &mut Reader<R>) -> io::Result<Fault> {
    let signo = r.u32()? as i32;
    let in_guard = r.u32()? != 0;
    let addr = r.u64()?;
    let y_base = r.u64()?;
    let n = r.u64()?;
    Ok(Fault {
        signo,
        addr,
        in_guard,
        y_base,
        n,
    })
}

/// Fixed-size encoding of a fault record, built without allocating (it is written from a
/// signal handler).
pub fn fault_bytes(f: &Fault) -> [u8; 36] {
    let mut b = [0u8; 36];
    b[0..4].copy_from_slice(&TAG_FAULT.to_le_bytes());
    b[4..8].copy_from_slice(&(f.signo as u32).to_le_bytes());
    b[8..12].copy_from_slice(&(f.in_guard as u32).to_le_bytes());
    b[12..20].copy_from_slice(&f.addr.to_le_bytes());
    b[20..28].copy_from_slice(&f.y_base.to_le_bytes());
    b[28..36].copy_from_slice(&f.n.to_le_bytes());
    b
}

/// Name of a signal number ("SIGSEGV"), or "signal N".
pub fn signal_name(signo: i32) -> String {
    let name = match signo {
        libc::SIGSEGV => "SIGSEGV",
        libc::SIGBUS => "SIGBUS",
        libc::SIGILL => "SIGILL",
        libc::SIGFPE => "SIGFPE",
        libc::SIGABRT => "SIGABRT",
        libc::SIGKILL => "SIGKILL",
        libc::SIGTERM => "SIGTERM",
        libc::SIGTRAP => "SIGTRAP",
        libc::SIGSYS => "SIGSYS",
        _ => return format!("signal {signo}"),
    };
    name.to_string()
}
