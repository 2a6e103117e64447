//! The byte protocol between the runner and its worker, over two pipes the worker moves away
//! from descriptors 0 and 1 before it loads the kernel.  Every field is a little-endian u32 or
//! u64; arrays of bit patterns travel as u32 whatever the format, which keeps one code path (the
//! overhead is measured by the `worker_overhead` benchmark).
//!
//! The kernel runs in the worker and can write into the reply pipe, so the runner trusts
//! nothing it reads: every request carries a token the reply must echo, and every count,
//! index and tag of a reply is checked against the request before anything is allocated from
//! it (see [`decode_reply`]).  A reply that fails a check is a [`io::ErrorKind::InvalidData`]
//! error, which the runner reports as the kernel writing into the worker's channel.

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
/// First word after TAG_OK in the worker's greeting ("ULPG").
pub const HELLO_MAGIC: u32 = 0x4750_4c55;

/// Most elements in one request; the runner's batches are far smaller, so a larger count can
/// only come from a corrupted stream.
pub const MAX_ELEMENTS: usize = 1 << 24;
/// Most threads of one request.
pub const MAX_THREADS: u32 = 256;
/// Most calls per thread of one request.
pub const MAX_REPS: u32 = 1 << 16;
/// Longest error message accepted.
pub const MAX_MESSAGE: usize = 1 << 16;
/// Size of a fault record after its tag: token, signal, flags, three addresses.
pub const FAULT_BODY: usize = 8 + 4 + 4 + 8 + 8 + 8;

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
#[derive(Clone, Debug, PartialEq, Eq)]
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
    /// Element strides (sx, sy) for strided kernels; (1, 1) for contiguous ones.
    pub strides: (i32, i32),
}

/// A call request as the runner sends it: the same fields as [`CallRequest`], the arrays
/// borrowed from the caller's batch, so that sending one copies them only into the pipe.
#[derive(Clone, Copy, Debug)]
pub struct CallArgs<'a> {
    /// Buffer placement.
    pub layout: Layout,
    /// Byte offset of x from a 64-byte boundary.
    pub x_offset: u32,
    /// Byte offset of y from a 64-byte boundary.
    pub y_offset: u32,
    /// Threads calling concurrently.
    pub threads: u32,
    /// Calls per thread.
    pub reps: u32,
    /// x (or y for from-output gradient kernels).
    pub first: &'a [u32],
    /// g, for gradient kernels.
    pub second: Option<&'a [u32]>,
    /// Element strides (sx, sy).
    pub strides: (i32, i32),
}

impl CallRequest {
    /// The request as borrowed arguments.
    pub fn args(&self) -> CallArgs<'_> {
        CallArgs {
            layout: self.layout,
            x_offset: self.x_offset,
            y_offset: self.y_offset,
            threads: self.threads,
            reps: self.reps,
            first: &self.first,
            second: self.second.as_deref(),
            strides: self.strides,
        }
    }
}

/// What a successful call reports.
#[derive(Clone, Debug, PartialEq, Eq)]
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
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Fault {
    /// Token of the request being served.
    pub token: u64,
    /// Signal number.
    pub signo: i32,
    /// Faulting address (si_addr); meaningful only when `faulted`.
    pub addr: u64,
    /// Whether the address lies in a guard page next to y.
    pub in_guard: bool,
    /// Whether the kernel itself faulted (`si_code > 0`), so that `addr` is where; a signal
    /// sent with kill, raise or abort carries a sender's pid there instead.
    pub faulted: bool,
    /// Whether the worker had run out of its address space (`--kernel-memory`): an allocation
    /// in the call failed (ENOMEM) or the mappings had reached the limit.
    pub out_of_memory: bool,
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
    /// Reads `n` u32 (at most [`MAX_ELEMENTS`]: callers check counts first, this is the
    /// backstop against allocating from a forged one).
    pub fn u32s(&mut self, n: usize) -> io::Result<Vec<u32>> {
        let mut v = Vec::new();
        self.u32s_into(n, &mut v)?;
        Ok(v)
    }
    /// Reads `n` u32 into `v`, reusing its allocation: a buffer already `n` long is not
    /// zeroed first (every element is overwritten, or the read fails).
    pub fn u32s_into(&mut self, n: usize, v: &mut Vec<u32>) -> io::Result<()> {
        if n > MAX_ELEMENTS {
            return Err(bad(&format!("an array of {n} elements")));
        }
        v.truncate(n);
        v.resize(n, 0);
        // SAFETY: the u32 buffer viewed as bytes; every byte pattern is a valid u32.
        let bytes = unsafe { std::slice::from_raw_parts_mut(v.as_mut_ptr() as *mut u8, n * 4) };
        self.0.read_exact(bytes)?;
        if cfg!(target_endian = "big") {
            v.iter_mut().for_each(|x| *x = u32::from_le(*x));
        }
        Ok(())
    }
    /// Reads a length-prefixed string of at most [`MAX_MESSAGE`] bytes.
    pub fn str(&mut self) -> io::Result<String> {
        let n = self.u32()? as usize;
        if n > MAX_MESSAGE {
            return Err(bad(&format!("a message of {n} bytes")));
        }
        let mut b = vec![0u8; n];
        self.0.read_exact(&mut b)?;
        Ok(String::from_utf8_lossy(&b).into_owned())
    }
}

fn bad(what: &str) -> io::Error {
    io::Error::new(io::ErrorKind::InvalidData, what.to_string())
}

/// The fixed-size part of a call request (op code, token and fields, up to the arrays).
fn call_head(op: u32, token: u64, req: &CallArgs) -> Writer {
    let mut w = Writer(Vec::with_capacity(48));
    w.u32(op)
        .u64(token)
        .u32(req.layout as u32)
        .u32(req.x_offset)
        .u32(req.y_offset)
        .u32(req.threads)
        .u32(req.reps)
        .u32(req.first.len() as u32)
        .u32(req.second.is_some() as u32)
        .u32(req.strides.0 as u32)
        .u32(req.strides.1 as u32);
    w
}

/// Encodes a call request (`op` is [`OP_CALL`] or [`OP_BENCH`]) with its token.
pub fn encode_call(op: u32, token: u64, req: &CallRequest) -> Writer {
    let args = req.args();
    let mut w = call_head(op, token, &args);
    w.u32s(args.first);
    if let Some(s) = args.second {
        w.u32s(s);
    }
    w
}

/// Writes a call request as [`encode_call`] encodes it, the arrays straight from the caller's
/// slices (no request buffer to fill first).
pub fn send_call(out: &mut impl Write, op: u32, token: u64, req: &CallArgs) -> io::Result<()> {
    out.write_all(&call_head(op, token, req).0)?;
    write_u32s(out, req.first)?;
    if let Some(s) = req.second {
        write_u32s(out, s)?;
    }
    out.flush()
}

/// Writes an array of u32 in the protocol's byte order.
fn write_u32s(out: &mut impl Write, v: &[u32]) -> io::Result<()> {
    if cfg!(target_endian = "little") {
        // SAFETY: any u32 slice is a valid byte slice of four times the length.
        let bytes = unsafe { std::slice::from_raw_parts(v.as_ptr() as *const u8, v.len() * 4) };
        out.write_all(bytes)
    } else {
        let mut w = Writer::default();
        w.u32s(v);
        out.write_all(&w.0)
    }
}

impl CallRequest {
    /// A plain request with no inputs, for [`decode_call_into`] to fill.
    pub fn empty() -> CallRequest {
        CallRequest {
            layout: Layout::Padded,
            x_offset: 0,
            y_offset: 0,
            threads: 1,
            reps: 1,
            first: Vec::new(),
            second: None,
            strides: (1, 1),
        }
    }
}

/// Decodes a call request after its op code: (token, request).  Counts are bounded, so a
/// corrupted request stream cannot make the worker allocate without limit either.
pub fn decode_call<R: Read>(r: &mut Reader<R>) -> io::Result<(u64, CallRequest)> {
    let mut req = CallRequest::empty();
    let token = decode_call_into(r, &mut req)?;
    Ok((token, req))
}

/// [`decode_call`] into `req`, whose arrays' allocations are reused (the worker serves one
/// request after the other with the same buffers); the token.
pub fn decode_call_into<R: Read>(r: &mut Reader<R>, req: &mut CallRequest) -> io::Result<u64> {
    let token = r.u64()?;
    let layout = Layout::from_u32(r.u32()?)?;
    let (x_offset, y_offset, threads, reps) = (r.u32()?, r.u32()?, r.u32()?, r.u32()?);
    let n = r.u32()? as usize;
    let has_second = match r.u32()? {
        0 => false,
        1 => true,
        _ => return Err(bad("second-array flag")),
    };
    let strides = (r.u32()? as i32, r.u32()? as i32);
    let widest = strides
        .0
        .unsigned_abs()
        .max(strides.1.unsigned_abs())
        .max(1) as usize;
    if n > MAX_ELEMENTS || threads > MAX_THREADS || reps > MAX_REPS {
        return Err(bad("request out of bounds"));
    }
    // Buffers span n·|stride| elements: both bounds keep them small.
    if widest > super::stride::MAX_STRIDE as usize || n * widest > MAX_ELEMENTS {
        return Err(bad("strides out of bounds"));
    }
    r.u32s_into(n, &mut req.first)?;
    if has_second {
        let second = req.second.get_or_insert_with(Vec::new);
        r.u32s_into(n, second)?;
    } else {
        req.second = None;
    }
    req.layout = layout;
    req.x_offset = x_offset;
    req.y_offset = y_offset;
    req.threads = threads.max(1);
    req.reps = reps.max(1);
    req.strides = strides;
    Ok(token)
}

/// Output arrays a reply to `req` must hold, and elements in each: one array per call of a
/// thread, and with several threads each holds every thread's equal slice.
pub fn reply_shape(req: &CallRequest) -> (usize, usize) {
    shape_of(&req.args())
}

/// [`reply_shape`] of borrowed arguments.
fn shape_of(req: &CallArgs) -> (usize, usize) {
    let n = req.first.len();
    let threads = req.threads.max(1) as usize;
    let len = if threads > 1 {
        n / threads * threads
    } else {
        n
    };
    (req.reps.max(1) as usize, len)
}

/// The fields of a successful reply before its arrays.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct ReplyHead {
    /// FP control word before and after the (last) call.
    pub env: (u32, u32),
    /// First input element the kernel changed: (array, index, new bits).
    pub input_changed: Option<(u32, u32, u32)>,
    /// Byte offset from y[0] of the first damaged canary byte.
    pub canary: Option<i64>,
    /// Output arrays that follow.
    pub copies: usize,
    /// Elements in each.
    pub n: usize,
}

/// Encodes a successful reply up to its arrays (which follow as u32 each).
pub fn encode_reply_head(token: u64, head: &ReplyHead) -> Writer {
    let mut w = Writer(Vec::with_capacity(52));
    let (which, index, value) = head.input_changed.unwrap_or((u32::MAX, 0, 0));
    w.u32(TAG_OK)
        .u64(token)
        .u32(head.env.0)
        .u32(head.env.1)
        .u32(which)
        .u32(index)
        .u32(value)
        .u32(head.canary.is_some() as u32)
        .u64(head.canary.unwrap_or(0) as u64)
        .u32(head.copies as u32)
        .u32(head.n as u32);
    w
}

/// Encodes a successful call reply.
pub fn encode_reply(token: u64, reply: &CallReply) -> Writer {
    let head = ReplyHead {
        env: reply.env,
        input_changed: reply.input_changed,
        canary: reply.canary,
        copies: reply.outputs.len(),
        n: reply.outputs.first().map_or(0, |o| o.len()),
    };
    let mut w = encode_reply_head(token, &head);
    for o in &reply.outputs {
        w.u32s(o);
    }
    w
}

/// Reads the token after a reply's tag and fails unless it is `token`.
pub fn expect_token<R: Read>(r: &mut Reader<R>, token: u64) -> io::Result<()> {
    let got = r.u64()?;
    if got != token {
        return Err(bad(&format!(
            "a reply to request {got:#x} while {token:#x} was asked"
        )));
    }
    Ok(())
}

/// Decodes the reply to `req` after its TAG_OK and token, checking every field against the
/// request before reading the arrays: their number and length, which input changed and where,
/// the canary flag and offset.
pub fn decode_reply<R: Read>(r: &mut Reader<R>, req: &CallRequest) -> io::Result<CallReply> {
    let head = decode_reply_head(r, &req.args())?;
    let outputs = (0..head.copies)
        .map(|_| r.u32s(head.n))
        .collect::<io::Result<_>>()?;
    Ok(CallReply {
        env: head.env,
        input_changed: head.input_changed,
        canary: head.canary,
        outputs,
    })
}

/// Decodes the fields of the reply to `req` after its TAG_OK and token, checked as
/// [`decode_reply`] checks them; the arrays ([`ReplyHead::copies`] of [`ReplyHead::n`]) follow.
/// The 40 bytes are read at once: a reply with TAG_OK always carries all of them.
pub fn decode_reply_head<R: Read>(r: &mut Reader<R>, req: &CallArgs) -> io::Result<ReplyHead> {
    let mut b = [0u8; 40];
    r.0.read_exact(&mut b)?;
    let word = |i: usize| u32::from_le_bytes([b[i], b[i + 1], b[i + 2], b[i + 3]]);
    let env = (word(0), word(4));
    let (which, index, value) = (word(8), word(12), word(16));
    let has_canary = word(20);
    let canary = (word(24) as u64 | (word(28) as u64) << 32) as i64;
    let copies = word(32) as usize;
    let n = word(36) as usize;
    let (want_copies, want_n) = shape_of(req);
    if (copies, n) != (want_copies, want_n) {
        return Err(bad(&format!(
            "{copies} output arrays of {n} elements in reply to {want_copies} of {want_n}"
        )));
    }
    let arrays = if req.second.is_some() { 2 } else { 1 };
    let input_changed = match which {
        u32::MAX if (index, value) == (0, 0) => None,
        w if w < arrays && (index as usize) < req.first.len() => Some((which, index, value)),
        _ => return Err(bad("input-changed record out of range")),
    };
    // The canary area is a page or two around y's span: an offset beyond n elements at the
    // widest stride plus a few pages cannot come from the worker.
    let widest = req.strides.1.unsigned_abs().max(1) as i64;
    let reach = 4 * widest * req.first.len() as i64 + (1 << 20);
    let canary = match has_canary {
        0 if canary == 0 => None,
        1 if canary.abs() <= reach => Some(canary),
        _ => return Err(bad("canary record out of range")),
    };
    Ok(ReplyHead {
        env,
        input_changed,
        canary,
        copies,
        n,
    })
}

/// Decodes a throughput reply after its TAG_OK and token: nanoseconds per element, finite and
/// not negative.
pub fn decode_bench<R: Read>(r: &mut Reader<R>) -> io::Result<f64> {
    let ns = f64::from_bits(r.u64()?);
    if !(ns.is_finite() && ns >= 0.0) {
        return Err(bad(&format!("a throughput of {ns} ns per element")));
    }
    Ok(ns)
}

/// Decodes a fault record after its TAG_FAULT.
pub fn decode_fault<R: Read>(r: &mut Reader<R>) -> io::Result<Fault> {
    let token = r.u64()?;
    let signo = r.u32()? as i32;
    let flags = r.u32()?;
    if flags & !(FLAG_IN_GUARD | FLAG_FAULTED | FLAG_OUT_OF_MEMORY) != 0 {
        return Err(bad("fault record flag"));
    }
    let addr = r.u64()?;
    let y_base = r.u64()?;
    let n = r.u64()?;
    Ok(Fault {
        token,
        signo,
        addr,
        in_guard: flags & FLAG_IN_GUARD != 0,
        faulted: flags & FLAG_FAULTED != 0,
        out_of_memory: flags & FLAG_OUT_OF_MEMORY != 0,
        y_base,
        n,
    })
}

/// Fault record flags (one word): the address is in a guard page.
const FLAG_IN_GUARD: u32 = 1;
/// The kernel really faulted: the address is meaningful.
const FLAG_FAULTED: u32 = 2;
/// The worker had run out of its address space.
const FLAG_OUT_OF_MEMORY: u32 = 4;

/// Fixed-size encoding of a fault record, built without allocating (it is written from a
/// signal handler).
pub fn fault_bytes(f: &Fault) -> [u8; 4 + FAULT_BODY] {
    let mut b = [0u8; 4 + FAULT_BODY];
    b[0..4].copy_from_slice(&TAG_FAULT.to_le_bytes());
    b[4..12].copy_from_slice(&f.token.to_le_bytes());
    b[12..16].copy_from_slice(&(f.signo as u32).to_le_bytes());
    let flag = |on: bool, bit: u32| if on { bit } else { 0 };
    let flags = flag(f.in_guard, FLAG_IN_GUARD)
        | flag(f.faulted, FLAG_FAULTED)
        | flag(f.out_of_memory, FLAG_OUT_OF_MEMORY);
    b[16..20].copy_from_slice(&flags.to_le_bytes());
    b[20..28].copy_from_slice(&f.addr.to_le_bytes());
    b[28..36].copy_from_slice(&f.y_base.to_le_bytes());
    b[36..44].copy_from_slice(&f.n.to_le_bytes());
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
        libc::SIGPIPE => "SIGPIPE",
        libc::SIGHUP => "SIGHUP",
        libc::SIGINT => "SIGINT",
        libc::SIGQUIT => "SIGQUIT",
        libc::SIGALRM => "SIGALRM",
        libc::SIGUSR1 => "SIGUSR1",
        libc::SIGUSR2 => "SIGUSR2",
        libc::SIGXCPU => "SIGXCPU",
        libc::SIGXFSZ => "SIGXFSZ",
        libc::SIGVTALRM => "SIGVTALRM",
        libc::SIGPROF => "SIGPROF",
        _ => return format!("signal {signo}"),
    };
    name.to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn request(n: usize, threads: u32, reps: u32, second: bool) -> CallRequest {
        CallRequest {
            layout: Layout::Padded,
            x_offset: 0,
            y_offset: 0,
            threads,
            reps,
            first: (0..n as u32).collect(),
            second: second.then(|| vec![7; n]),
            strides: (1, 1),
        }
    }

    fn reply(req: &CallRequest) -> CallReply {
        let (copies, n) = reply_shape(req);
        CallReply {
            env: (0x1f80, 0x1f80),
            input_changed: None,
            canary: None,
            outputs: vec![vec![3; n]; copies],
        }
    }

    /// Decodes `bytes` (a reply after its tag) as the reply to `req`.
    fn decode(bytes: &[u8], req: &CallRequest) -> io::Result<CallReply> {
        let mut cursor = io::Cursor::new(bytes);
        let mut r = Reader(&mut cursor);
        expect_token(&mut r, 42)?;
        decode_reply(&mut r, req)
    }

    #[test]
    fn a_reply_round_trips_and_echoes_its_token() {
        for req in [request(10, 1, 1, false), request(10, 4, 3, true)] {
            let good = reply(&req);
            let bytes = encode_reply(42, &good).0;
            assert_eq!(decode(&bytes[4..], &req).unwrap(), good);
            let wrong_token = encode_reply(43, &good).0;
            assert!(decode(&wrong_token[4..], &req).is_err());
        }
    }

    #[test]
    fn forged_counts_are_refused_before_any_allocation() {
        let req = request(4096, 1, 1, false);
        let mut forged = reply(&req);
        forged.outputs = vec![vec![0; 4096]];
        let mut bytes = encode_reply(42, &forged).0;
        // The element count sits after tag, token, 5 words, canary flag and offset, copies.
        let at = 4 + 8 + 5 * 4 + 4 + 8 + 4;
        for (copies, n) in [
            (1u32, u32::MAX),
            (u32::MAX, 4096),
            (1, 4095),
            (2, 4096),
            (0, 0),
        ] {
            bytes[at - 4..at].copy_from_slice(&copies.to_le_bytes());
            bytes[at..at + 4].copy_from_slice(&n.to_le_bytes());
            let e = decode(&bytes[4..], &req).unwrap_err();
            assert_eq!(e.kind(), io::ErrorKind::InvalidData, "{copies} x {n}");
        }
    }

    #[test]
    fn records_out_of_range_and_truncated_replies_are_errors() {
        let req = request(8, 1, 1, false);
        let mut bad_index = reply(&req);
        bad_index.input_changed = Some((0, 8, 1));
        let mut bad_array = reply(&req);
        bad_array.input_changed = Some((1, 0, 1));
        let mut far_canary = reply(&req);
        far_canary.canary = Some(1 << 40);
        for forged in [bad_index, bad_array, far_canary] {
            let bytes = encode_reply(42, &forged).0;
            assert_eq!(
                decode(&bytes[4..], &req).unwrap_err().kind(),
                io::ErrorKind::InvalidData
            );
        }
        let bytes = encode_reply(42, &reply(&req)).0;
        for cut in [5, 20, bytes.len() - 1] {
            assert_eq!(
                decode(&bytes[4..cut], &req).unwrap_err().kind(),
                io::ErrorKind::UnexpectedEof
            );
        }
    }

    #[test]
    fn requests_are_bounded_too() {
        let req = request(3, 1, 2, true);
        let bytes = encode_call(OP_CALL, 9, &req).0;
        let mut cursor = io::Cursor::new(&bytes[4..]);
        assert_eq!(
            decode_call(&mut Reader(&mut cursor)).unwrap(),
            (9, req.clone())
        );
        let mut huge = bytes.clone();
        // n sits after op, token and five words.
        huge[4 + 8 + 20..4 + 8 + 24].copy_from_slice(&u32::MAX.to_le_bytes());
        let mut cursor = io::Cursor::new(&huge[4..]);
        assert!(decode_call(&mut Reader(&mut cursor)).is_err());
        // Strides sit after n and the second-array flag; beyond MAX_STRIDE they are forged.
        let strided = CallRequest {
            strides: (-3, 64),
            ..req.clone()
        };
        let bytes = encode_call(OP_CALL, 9, &strided).0;
        let mut cursor = io::Cursor::new(&bytes[4..]);
        assert_eq!(decode_call(&mut Reader(&mut cursor)).unwrap(), (9, strided));
        let mut wide = bytes.clone();
        wide[4 + 8 + 28..4 + 8 + 32].copy_from_slice(&(-65i32 as u32).to_le_bytes());
        let mut cursor = io::Cursor::new(&wide[4..]);
        assert!(decode_call(&mut Reader(&mut cursor)).is_err());
    }

    #[test]
    fn sent_requests_and_split_replies_match_the_whole_encodings() {
        // The worker reuses one request for every call: a larger one with a second array
        // before a smaller one without must leave exactly the smaller one.
        let big = request(9, 1, 2, true);
        let small = request(3, 1, 1, false);
        let mut reused = big.clone();
        for req in [&small, &big, &small] {
            let mut sent = Vec::new();
            send_call(&mut sent, OP_CALL, 9, &req.args()).unwrap();
            assert_eq!(sent, encode_call(OP_CALL, 9, req).0);
            let mut cursor = io::Cursor::new(&sent[4..]);
            assert_eq!(
                decode_call_into(&mut Reader(&mut cursor), &mut reused).unwrap(),
                9
            );
            assert_eq!(&reused, req);
        }
        let good = reply(&big);
        let head = ReplyHead {
            env: good.env,
            input_changed: Some((1, 8, 5)),
            canary: Some(-3),
            copies: 2,
            n: 9,
        };
        let whole = CallReply {
            input_changed: head.input_changed,
            canary: head.canary,
            ..good
        };
        let mut split = encode_reply_head(42, &head).0;
        for o in &whole.outputs {
            split.extend(o.iter().flat_map(|v| v.to_le_bytes()));
        }
        assert_eq!(split, encode_reply(42, &whole).0);
        let mut cursor = io::Cursor::new(&split[4..]);
        let mut r = Reader(&mut cursor);
        expect_token(&mut r, 42).unwrap();
        assert_eq!(decode_reply_head(&mut r, &big.args()).unwrap(), head);
        let mut out = vec![u32::MAX; 20];
        r.u32s_into(9, &mut out).unwrap();
        assert_eq!(out, whole.outputs[0]);
    }

    #[test]
    fn fault_records_round_trip_and_bench_figures_are_checked() {
        let f = Fault {
            token: 5,
            signo: libc::SIGSEGV,
            addr: 0xdead,
            in_guard: true,
            faulted: true,
            out_of_memory: true,
            y_base: 0x1000,
            n: 9,
        };
        let bytes = fault_bytes(&f);
        let mut cursor = io::Cursor::new(&bytes[4..]);
        assert_eq!(decode_fault(&mut Reader(&mut cursor)).unwrap(), f);
        // A flag word with an unknown bit is forged.
        let mut forged = bytes;
        forged[16] |= 8;
        let mut cursor = io::Cursor::new(&forged[4..]);
        assert!(decode_fault(&mut Reader(&mut cursor)).is_err());
        for bad in [f64::NAN, -1.0, f64::INFINITY] {
            let b = bad.to_bits().to_le_bytes();
            let mut cursor = io::Cursor::new(&b[..]);
            assert!(decode_bench(&mut Reader(&mut cursor)).is_err());
        }
        // Signal numbers from <signal.h> on Linux (signal(7)).
        assert_eq!(signal_name(13), "SIGPIPE");
        assert_eq!(signal_name(11), "SIGSEGV");
    }
}
