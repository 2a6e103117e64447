//! The worker side: runs inside `ulpgauge worker`, loads the library, and serves call requests
//! until its input closes.  A fatal signal is reported over the protocol by a handler that then
//! lets the signal kill the process, so the runner learns both the signal and the fault address.
//!
//! Before the kernel is loaded the protocol pipes move off descriptors 0 and 1 (to
//! close-on-exec descriptors), 0 becomes /dev/null and 1 a copy of stderr: a kernel that prints
//! or reads its standard input touches neither pipe by accident.  A thread watches the parent:
//! when ulpgauge dies, the worker kills its own process group (itself and whatever the kernel
//! forked), even while the kernel is stuck in a call.

use super::abi::Abi;
use super::protocol::{
    self, decode_call_into, encode_reply_head, CallRequest, Fault, Layout, Reader, ReplyHead,
    Writer, HELLO_MAGIC, OP_BENCH, OP_CALL, OP_QUIT, TAG_ERROR, TAG_OK,
};
use super::stride::Span;
use super::{fpenv, loader};
use std::ffi::c_void;
use std::fs::File;
use std::io::{BufReader, Write};
use std::os::fd::FromRawFd;
use std::path::PathBuf;
use std::sync::atomic::{AtomicI32, AtomicU64, Ordering};
use std::time::{Duration, Instant};

/// What the worker needs to know, from its command line.
#[derive(Clone, Debug)]
pub struct WorkerConfig {
    /// The shared library.
    pub library: PathBuf,
    /// The kernel symbol.
    pub symbol: String,
    /// How to call it.
    pub abi: Abi,
    /// The runner's pid: when it is no longer our parent, the worker ends its process group.
    pub parent: Option<i32>,
    /// The caller's FP control word (`check --caller-fpenv`), set before loading the library
    /// and before every kernel call; `None` leaves the process default alone.
    pub fpenv: Option<u32>,
}

/// The caller's control word, or `u64::MAX` for none.
static CALLER_ENV: AtomicU64 = AtomicU64::new(u64::MAX);

/// Puts the caller's FP environment in place on this thread, as a framework would before
/// calling the kernel (the register is per thread, and a kernel may have changed it).
fn enter_caller_env() {
    let word = CALLER_ENV.load(Ordering::Relaxed);
    if word != u64::MAX {
        fpenv::write(word as u32);
    }
}

static PROTO_FD: AtomicI32 = AtomicI32::new(-1);
static TOKEN: AtomicU64 = AtomicU64::new(0);
static Y_BASE: AtomicU64 = AtomicU64::new(0);
static CALL_N: AtomicU64 = AtomicU64::new(0);
static GUARD_LO: AtomicU64 = AtomicU64::new(0);
static GUARD_HI: AtomicU64 = AtomicU64::new(0);
static PAGE: AtomicU64 = AtomicU64::new(4096);
/// The address-space limit the runner set (`RLIMIT_AS`), 0 when there is none.
static AS_LIMIT: AtomicU64 = AtomicU64::new(0);

const CANARY: u8 = 0xa5;
/// Lowest descriptor the protocol pipes move to.
const PROTOCOL_FD_BASE: libc::c_int = 200;
/// How often the parent watch looks.
const PARENT_WATCH: Duration = Duration::from_millis(100);

/// Moves the request pipe (stdin) and the reply pipe (stdout) to fresh close-on-exec
/// descriptors; stdin becomes /dev/null and stdout a copy of stderr.  Returns (requests,
/// replies).
fn move_protocol() -> Option<(libc::c_int, libc::c_int)> {
    // SAFETY: descriptor juggling on descriptors this process owns.
    unsafe {
        let high = |fd| {
            let moved = libc::fcntl(fd, libc::F_DUPFD_CLOEXEC, PROTOCOL_FD_BASE);
            if moved >= 0 {
                moved
            } else {
                libc::fcntl(fd, libc::F_DUPFD_CLOEXEC, 3)
            }
        };
        let (input, output) = (high(0), high(1));
        if input < 0 || output < 0 {
            return None;
        }
        let null = libc::open(c"/dev/null".as_ptr(), libc::O_RDONLY | libc::O_CLOEXEC);
        if null >= 0 {
            libc::dup2(null, 0);
            libc::close(null);
        } else {
            libc::close(0);
        }
        libc::dup2(2, 1);
        Some((input, output))
    }
}

/// Ends the worker's process group as soon as `parent` is no longer its parent (ulpgauge died
/// and the worker was adopted by another process).
fn watch_parent(parent: i32) {
    let end = || {
        // SAFETY: getpgrp/getpid/kill/_exit have no preconditions; the group is ours only when
        // we lead it (the runner starts workers that way), otherwise only this process ends.
        unsafe {
            if libc::getpgrp() == libc::getpid() {
                libc::kill(0, libc::SIGKILL);
            }
            libc::_exit(0);
        }
    };
    // SAFETY: getppid has no preconditions.
    if unsafe { libc::getppid() } != parent {
        end();
    }
    let _ = std::thread::Builder::new()
        .name("parent-watch".into())
        .spawn(move || loop {
            std::thread::sleep(PARENT_WATCH);
            // SAFETY: as above.
            if unsafe { libc::getppid() } != parent {
                end();
            }
        });
}

/// Serves requests until the request pipe closes (see the module documentation).
pub fn serve(config: WorkerConfig) -> i32 {
    let Some((in_fd, out_fd)) = move_protocol() else {
        return 70;
    };
    if let Some(parent) = config.parent {
        watch_parent(parent);
    }
    PROTO_FD.store(out_fd, Ordering::SeqCst);
    // SAFETY: both descriptors are fresh duplicates owned by nothing else.
    let mut out = unsafe { File::from_raw_fd(out_fd) };
    let mut input = BufReader::with_capacity(1 << 16, unsafe { File::from_raw_fd(in_fd) });
    // SAFETY: sysconf has no preconditions.
    PAGE.store(
        unsafe { libc::sysconf(libc::_SC_PAGESIZE) } as u64,
        Ordering::SeqCst,
    );
    install_handlers();
    AS_LIMIT.store(address_space_limit(), Ordering::SeqCst);
    if let Some(word) = config.fpenv {
        CALLER_ENV.store(word.into(), Ordering::SeqCst);
    }
    enter_caller_env();

    let before = fpenv::read();
    let loaded = loader::open(&config.library, &config.symbol);
    let after = fpenv::read();
    let loaded = match loaded {
        Ok(l) => l,
        Err(message) => {
            let _ = Writer::default()
                .u32(TAG_ERROR)
                .str(&message)
                .send(&mut out);
            return 0;
        }
    };
    let hello = Writer::default()
        .u32(TAG_OK)
        .u32(HELLO_MAGIC)
        .u32(before.is_some() as u32)
        .u32(before.unwrap_or(0))
        .u32(after.unwrap_or(0))
        .0
        .clone();
    if out.write_all(&hello).and_then(|_| out.flush()).is_err() {
        return 0;
    }
    let kernel = Kernel {
        abi: config.abi,
        symbol: loaded.symbol,
    };
    // One request and one reply buffer for the worker's life: each call overwrites them.
    let mut req = CallRequest::empty();
    let mut wire = Vec::new();
    loop {
        let mut r = Reader(&mut input);
        let op = match r.u32() {
            Ok(op) => op,
            Err(_) => return 0,
        };
        let sent = match op {
            OP_CALL => match decode_call_into(&mut r, &mut req) {
                Ok(token) => {
                    TOKEN.store(token, Ordering::SeqCst);
                    let head = kernel.call(&req, &mut wire);
                    // The arrays go from the reply buffer into the pipe, without a copy into
                    // one message first.
                    out.write_all(&encode_reply_head(token, &head).0)
                        .and_then(|_| out.write_all(&wire))
                        .and_then(|_| out.flush())
                }
                Err(_) => return 65,
            },
            OP_BENCH => match decode_call_into(&mut r, &mut req) {
                Ok(token) => {
                    TOKEN.store(token, Ordering::SeqCst);
                    let mut w = Writer::default();
                    w.u32(TAG_OK).u64(token).u64(kernel.bench(&req).to_bits());
                    w.send(&mut out)
                }
                Err(_) => return 65,
            },
            OP_QUIT => return 0,
            _ => return 65,
        };
        if sent.is_err() {
            return 0;
        }
    }
}

struct Kernel {
    abi: Abi,
    symbol: *const c_void,
}

// SAFETY: the symbol is a code address; whether concurrent calls are allowed is the kernel's
// declaration, which the runner honours.
unsafe impl Sync for Kernel {}

/// Anonymous mapping, unmapped on drop (or kept for the next call of the same size when no
/// page of it is protected: mapping and faulting in fresh pages cost more than most kernels).
struct Region {
    base: *mut u8,
    len: usize,
    guarded: bool,
}

/// Mappings kept for reuse, per thread: (base, length).
const POOL_SIZE: usize = 4;
thread_local! {
    static POOL: std::cell::RefCell<Vec<(usize, usize)>> = const { std::cell::RefCell::new(Vec::new()) };
}

impl Region {
    /// A mapping of at least `len` bytes, canary bytes throughout.
    fn new(len: usize) -> Region {
        Region::with_hole(len, 0..0)
    }

    /// [`Region::new`] but for the bytes of `hole`, which the caller fills at once (the
    /// input's data: writing canaries there first would only be overwritten).
    fn with_hole(len: usize, hole: std::ops::Range<usize>) -> Region {
        let page = PAGE.load(Ordering::Relaxed) as usize;
        let len = len.div_ceil(page) * page;
        let reused = POOL.with(|pool| {
            let mut pool = pool.borrow_mut();
            let i = pool.iter().position(|&(_, l)| l == len)?;
            Some(pool.swap_remove(i).0 as *mut libc::c_void)
        });
        // SAFETY: a fresh private anonymous mapping.
        let base = reused.unwrap_or_else(|| unsafe {
            libc::mmap(
                std::ptr::null_mut(),
                len,
                libc::PROT_READ | libc::PROT_WRITE,
                libc::MAP_PRIVATE | libc::MAP_ANONYMOUS,
                -1,
                0,
            )
        });
        if base == libc::MAP_FAILED {
            // Out of address space (the kernel holds the rest): abort with errno still ENOMEM,
            // so that the fault handler names it.
            std::process::abort();
        }
        // A reused mapping looks exactly like a fresh one: canary bytes throughout (the hole
        // is the caller's to fill).
        let hole = hole.start.min(len)..hole.end.min(len).max(hole.start.min(len));
        // SAFETY: the mapping is len bytes long and writable; both ranges lie inside it.
        unsafe {
            std::ptr::write_bytes(base as *mut u8, CANARY, hole.start);
            std::ptr::write_bytes((base as *mut u8).add(hole.end), CANARY, len - hole.end);
        }
        Region {
            base: base as *mut u8,
            len,
            guarded: false,
        }
    }
    fn protect(&mut self, offset: usize, len: usize) {
        self.guarded = true;
        // SAFETY: the range lies inside this mapping and is page aligned.
        unsafe { libc::mprotect(self.base.add(offset) as *mut c_void, len, libc::PROT_NONE) };
    }
}

impl Drop for Region {
    fn drop(&mut self) {
        let kept = !self.guarded
            && POOL.with(|pool| {
                let mut pool = pool.borrow_mut();
                let room = pool.len() < POOL_SIZE;
                if room {
                    pool.push((self.base as usize, self.len));
                }
                room
            });
        if !kept {
            // SAFETY: unmaps exactly what new() mapped.
            unsafe { libc::munmap(self.base as *mut c_void, self.len) };
        }
    }
}

/// Input array copied into element format, with slack on both sides for misaligned or
/// over-reading kernels.  A strided array's gaps and surroundings hold the format's quiet NaN,
/// so a kernel that reads a gap instead of an element gives itself away.
struct Input {
    _region: Region,
    /// The lowest element position of the span.
    low: *mut u8,
    /// Element 0, the pointer the kernel receives.
    ptr: *mut u8,
    /// The whole span as laid out (elements and gaps).
    bytes: Vec<u8>,
    span: Span,
}

/// A quiet NaN in every format of each width (binary32; binary16 and bfloat16; E4M3 and E5M2).
fn gap_pattern(eb: usize) -> u32 {
    match eb {
        1 => 0x7f,
        2 => 0x7fc0,
        _ => 0x7fc0_0000,
    }
}

fn encode(values: &[u32], eb: usize) -> Vec<u8> {
    if eb == 4 {
        let mut bytes = Vec::new();
        append_u32s(values, &mut bytes);
        return bytes;
    }
    let mut bytes = Vec::with_capacity(values.len() * eb);
    for &v in values {
        if eb == 1 {
            bytes.push(v as u8);
        } else if eb == 2 {
            bytes.extend_from_slice(&(v as u16).to_le_bytes());
        } else {
            bytes.extend_from_slice(&v.to_le_bytes());
        }
    }
    bytes
}

/// Appends u32 values little-endian, as the protocol carries them: one copy on little-endian
/// machines.
fn append_u32s(values: &[u32], bytes: &mut Vec<u8>) {
    if cfg!(target_endian = "little") {
        // SAFETY: any u32 slice is a valid byte slice of four times the length.
        let raw =
            unsafe { std::slice::from_raw_parts(values.as_ptr() as *const u8, values.len() * 4) };
        bytes.extend_from_slice(raw);
    } else {
        values
            .iter()
            .for_each(|v| bytes.extend_from_slice(&v.to_le_bytes()));
    }
}

fn decode(bytes: &[u8], eb: usize) -> Vec<u32> {
    bytes
        .chunks_exact(eb)
        .map(|c| {
            if eb == 1 {
                c[0] as u32
            } else if eb == 2 {
                u16::from_le_bytes([c[0], c[1]]) as u32
            } else {
                u32::from_le_bytes([c[0], c[1], c[2], c[3]])
            }
        })
        .collect()
}

impl Input {
    /// `around`: NaN around the array too (strided kernels), not the canary bytes.
    fn new(values: &[u32], eb: usize, offset: usize, stride: isize, around: bool) -> Input {
        let page = PAGE.load(Ordering::Relaxed) as usize;
        let span = Span {
            stride,
            n: values.len(),
        };
        let bytes = if stride == 1 {
            encode(values, eb)
        } else {
            let mut laid = vec![gap_pattern(eb); span.elems()];
            for (i, &v) in values.iter().enumerate() {
                // Stride 0: every element is x[0], the first value.
                if stride != 0 || i == 0 {
                    laid[span.pos(i)] = v;
                }
            }
            encode(&laid, eb)
        };
        let start = page + offset % 64;
        let region = if around {
            Region::new(2 * page + 64 + bytes.len())
        } else {
            Region::with_hole(2 * page + 64 + bytes.len(), start..start + bytes.len())
        };
        if around {
            // Around a strided x too: a read past either end comes out as NaN.
            let nan = encode(&[gap_pattern(eb)], eb);
            // SAFETY: the region is region.len writable bytes.
            let all = unsafe { std::slice::from_raw_parts_mut(region.base, region.len) };
            all.chunks_exact_mut(eb)
                .for_each(|c| c.copy_from_slice(&nan));
        }
        // SAFETY: page + offset + len stays inside the region.
        let low = unsafe { region.base.add(start) };
        unsafe { std::ptr::copy_nonoverlapping(bytes.as_ptr(), low, bytes.len()) };
        Input {
            _region: region,
            low,
            // SAFETY: element 0 lies inside the span.
            ptr: unsafe { low.add(span.lead() * eb) },
            bytes,
            span,
        }
    }
    /// Puts the original bytes back.
    fn restore(&self) {
        // SAFETY: low holds bytes.len() writable bytes.
        unsafe { std::ptr::copy_nonoverlapping(self.bytes.as_ptr(), self.low, self.bytes.len()) };
    }
    /// First element whose bytes differ from the original: (index, new bits).  Gaps of a
    /// strided x are not elements and are not reported.
    fn changed(&self, eb: usize) -> Option<(u32, u32)> {
        // SAFETY: low holds bytes.len() readable bytes.
        let now = unsafe { std::slice::from_raw_parts(self.low, self.bytes.len()) };
        if now == self.bytes.as_slice() {
            return None;
        }
        let count = if self.span.stride == 0 {
            self.span.n.min(1)
        } else {
            self.span.n
        };
        (0..count).find_map(|i| {
            let p = self.span.pos(i) * eb;
            let (a, b) = (&now[p..p + eb], &self.bytes[p..p + eb]);
            (a != b).then(|| (i as u32, decode(a, eb)[0]))
        })
    }
}

/// The output buffer, placed per the layout, with canary bytes on its free sides and in the
/// gaps of a strided y.
struct Output {
    region: Region,
    /// Element 0.
    y: *mut u8,
    /// The lowest element position of the span, as an offset into the region.
    low: usize,
    span: Span,
    eb: usize,
    /// Canary byte ranges, as offsets into the region.
    canaries: Vec<(usize, usize)>,
}

impl Output {
    fn new(layout: Layout, n: usize, eb: usize, stride: isize, offset: usize) -> Output {
        let page = PAGE.load(Ordering::Relaxed) as usize;
        let span = Span { stride, n };
        let n_bytes = span.elems() * eb;
        let (region, low, canaries) = match layout {
            Layout::Padded | Layout::InPlace => {
                let region = Region::new(2 * page + 64 + n_bytes);
                let start = page + offset % 64;
                let canaries = vec![(0, start), (start + n_bytes, region.len)];
                (region, start, canaries)
            }
            Layout::GuardAfter | Layout::GuardBefore => {
                let data = (n_bytes + 128).div_ceil(page) * page;
                let mut region = Region::new(page + data + page);
                region.protect(0, page);
                region.protect(page + data, page);
                let base = region.base as u64;
                GUARD_LO.store(base, Ordering::SeqCst);
                GUARD_HI.store(base + (page + data) as u64, Ordering::SeqCst);
                let (start, canaries) = if layout == Layout::GuardAfter {
                    let start = page + data - n_bytes;
                    (start, vec![(page, start)])
                } else {
                    (page, vec![(page + n_bytes, page + data)])
                };
                (region, start, canaries)
            }
        };
        Output {
            // SAFETY: element 0 lies inside the span, inside the region.
            y: unsafe { region.base.add(low + span.lead() * eb) },
            low,
            span,
            eb,
            canaries,
            region,
        }
    }
    /// Offset from y[0] of the lowest overwritten canary byte (outside the span or in a gap).
    fn damaged_canary(&self) -> Option<i64> {
        let y_off = (self.y as usize - self.region.base as usize) as i64;
        // SAFETY: the whole region is readable except its guard pages, which no canary range
        // and no span byte touches.
        let at = |lo: usize, hi: usize| unsafe {
            std::slice::from_raw_parts(self.region.base.add(lo), hi - lo)
        };
        let outside = self.canaries.iter().find_map(|&(lo, hi)| {
            let i = at(lo, hi).iter().position(|&b| b != CANARY)?;
            Some((lo + i) as i64 - y_off)
        });
        let gap = if self.span.stride.unsigned_abs() > 1 {
            let bytes = at(self.low, self.low + self.span.elems() * self.eb);
            (0..bytes.len())
                .find(|&b| !self.span.is_element(b / self.eb) && bytes[b] != CANARY)
                .map(|b| (self.low + b) as i64 - y_off)
        } else {
            None
        };
        match (outside, gap) {
            (Some(a), Some(b)) => Some(a.min(b)),
            (a, b) => a.or(b),
        }
    }
    /// Appends y's elements to `wire` as the reply carries them (u32 little-endian each).
    fn append_wire(&self, wire: &mut Vec<u8>) {
        let eb = self.eb;
        // SAFETY: the span's bytes are readable.
        let bytes = unsafe {
            std::slice::from_raw_parts(self.region.base.add(self.low), self.span.elems() * eb)
        };
        if self.span.stride == 1 && eb == 4 && cfg!(target_endian = "little") {
            // Four-byte elements in place are already the wire's bytes.
            wire.extend_from_slice(bytes);
            return;
        }
        for i in 0..self.span.n {
            let p = self.span.pos(i) * eb;
            wire.extend_from_slice(&decode(&bytes[p..p + eb], eb)[0].to_le_bytes());
        }
    }
    /// Writes `values` into y's elements (the in-place layout's x).
    fn fill(&self, values: &[u8]) {
        let eb = self.eb;
        for (i, v) in values.chunks_exact(eb).enumerate() {
            // SAFETY: element i lies inside the span.
            unsafe {
                let p = self.region.base.add(self.low + self.span.pos(i) * eb);
                std::ptr::copy_nonoverlapping(v.as_ptr(), p, eb);
            }
        }
    }
}

impl Kernel {
    /// The request's strides for a strided kernel; a contiguous kernel's arrays are always
    /// contiguous.
    fn strides(&self, req: &CallRequest) -> (isize, isize) {
        if self.abi.strided {
            (req.strides.0 as isize, req.strides.1 as isize)
        } else {
            (1, 1)
        }
    }

    /// Serves one call request: the reply's head, its arrays (each repetition's outputs)
    /// written into `wire`.
    fn call(&self, req: &CallRequest, wire: &mut Vec<u8>) -> ReplyHead {
        wire.clear();
        if req.threads > 1 {
            return self.call_threads(req, wire);
        }
        let eb = self.abi.elem_bytes;
        let ob = self.abi.out_bytes;
        let n = req.first.len();
        let (sx, sy) = self.strides(req);
        // In place, x is y: it takes y's stride.
        let sx = if req.layout == Layout::InPlace {
            sy
        } else {
            sx
        };
        let x = Input::new(&req.first, eb, req.x_offset as usize, sx, self.abi.strided);
        let g = req
            .second
            .as_ref()
            .map(|s| Input::new(s, eb, req.x_offset as usize, 1, false));
        let y = Output::new(req.layout, n, ob, sy, req.y_offset as usize);
        let in_place_x = if req.layout == Layout::InPlace {
            encode(&req.first, eb)
        } else {
            Vec::new()
        };
        enter_caller_env();
        let before = fpenv::read().unwrap_or(0);
        let mut after = before;
        let mut input_changed = None;
        let mut canary = None;
        for rep in 0..req.reps {
            if rep > 0 {
                // A kernel that wrote its input must not see its own scribbles next time.
                x.restore();
                if let Some(g) = &g {
                    g.restore();
                }
            }
            let first_ptr = if req.layout == Layout::InPlace {
                y.fill(&in_place_x);
                y.y as *const u8
            } else {
                x.ptr as *const u8
            };
            Y_BASE.store(y.y as u64, Ordering::SeqCst);
            CALL_N.store(n as u64, Ordering::SeqCst);
            // An ENOMEM the fault handler sees must come from this call.
            set_errno(0);
            // SAFETY: buffers hold n elements of the declared type at their strides; the
            // kernel's declared shape is what the runner validated.
            unsafe {
                if self.abi.strided {
                    self.abi
                        .call_strided(self.symbol, first_ptr, sx, y.y, sy, n)
                } else {
                    self.abi.call(
                        self.symbol,
                        first_ptr,
                        g.as_ref().map_or(std::ptr::null(), |g| g.ptr as *const u8),
                        y.y,
                        n,
                    )
                }
            };
            Y_BASE.store(0, Ordering::SeqCst);
            after = fpenv::read().unwrap_or(0);
            y.append_wire(wire);
            if input_changed.is_none() && req.layout != Layout::InPlace {
                input_changed = x.changed(eb).map(|(i, v)| (0, i, v)).or_else(|| {
                    g.as_ref()
                        .and_then(|g| g.changed(eb))
                        .map(|(i, v)| (1, i, v))
                });
            }
            canary = canary.or_else(|| y.damaged_canary());
        }
        GUARD_LO.store(0, Ordering::SeqCst);
        GUARD_HI.store(0, Ordering::SeqCst);
        ReplyHead {
            env: (before, after),
            input_changed,
            canary,
            copies: req.reps as usize,
            n,
        }
    }

    /// Several threads at once, thread k on its own slice k of the inputs (n/threads elements
    /// each), so that a kernel with shared scratch state sees different data in each thread.
    /// Output r is the concatenation of every thread's r-th call.
    fn call_threads(&self, req: &CallRequest, wire: &mut Vec<u8>) -> ReplyHead {
        let threads = req.threads as usize;
        let m = req.first.len() / threads;
        let barrier = std::sync::Barrier::new(threads);
        // Each thread's reply arrays: reps outputs of m elements, 4 bytes each.
        let results: Vec<Vec<u8>> = std::thread::scope(|s| {
            let handles: Vec<_> = (0..threads)
                .map(|k| {
                    let single = CallRequest {
                        layout: Layout::Padded,
                        threads: 1,
                        first: req.first[k * m..(k + 1) * m].to_vec(),
                        second: req.second.as_ref().map(|g| g[k * m..(k + 1) * m].to_vec()),
                        ..req.clone()
                    };
                    let barrier = &barrier;
                    s.spawn(move || {
                        barrier.wait();
                        let mut own = Vec::new();
                        self.call(&single, &mut own);
                        own
                    })
                })
                .collect();
            handles
                .into_iter()
                .map(|h| h.join().unwrap_or_default())
                .collect()
        });
        // A thread that died gives no outputs: the arrays come out short, and the runner
        // refuses a reply of the wrong shape.
        let slice = 4 * m;
        let reps = req.reps as usize;
        for rep in 0..reps {
            for t in &results {
                if let Some(bytes) = t.get(rep * slice..(rep + 1) * slice) {
                    wire.extend_from_slice(bytes);
                }
            }
        }
        let env = fpenv::read().unwrap_or(0);
        ReplyHead {
            env: (env, env),
            input_changed: None,
            canary: None,
            copies: reps,
            n: wire.len() / 4 / reps.max(1),
        }
    }

    /// Nanoseconds per element: the fastest of several timed rounds, each long enough to
    /// swamp the clock's resolution.
    fn bench(&self, req: &CallRequest) -> f64 {
        let eb = self.abi.elem_bytes;
        let n = req.first.len().max(1);
        let (sx, sy) = self.strides(req);
        let x = Input::new(&req.first, eb, 0, sx, self.abi.strided);
        let g = req.second.as_ref().map(|s| Input::new(s, eb, 0, 1, false));
        let y = Output::new(Layout::Padded, n, self.abi.out_bytes, sy, 0);
        let gp = g.as_ref().map_or(std::ptr::null(), |g| g.ptr as *const u8);
        enter_caller_env();
        let len = req.first.len();
        // SAFETY: as in call().
        let once = || unsafe {
            if self.abi.strided {
                self.abi.call_strided(self.symbol, x.ptr, sx, y.y, sy, len)
            } else {
                self.abi.call(self.symbol, x.ptr, gp, y.y, len)
            }
        };
        set_errno(0);
        once();
        let mut calls = 1usize;
        loop {
            let t = Instant::now();
            for _ in 0..calls {
                once();
            }
            if t.elapsed().as_micros() >= 2000 || calls >= 1 << 20 {
                break;
            }
            calls *= 2;
        }
        let mut best = f64::INFINITY;
        for _ in 0..req.reps.clamp(1, 50) {
            let t = Instant::now();
            for _ in 0..calls {
                once();
            }
            best = best.min(t.elapsed().as_nanos() as f64 / (calls * n) as f64);
        }
        best
    }
}

fn install_handlers() {
    // SAFETY: installs an alternate stack (leaked on purpose: it lives as long as the process)
    // and handlers for the fatal signals.
    unsafe {
        let size = 1 << 16;
        let stack = libc::mmap(
            std::ptr::null_mut(),
            size,
            libc::PROT_READ | libc::PROT_WRITE,
            libc::MAP_PRIVATE | libc::MAP_ANONYMOUS,
            -1,
            0,
        );
        if stack != libc::MAP_FAILED {
            let ss = libc::stack_t {
                ss_sp: stack,
                ss_flags: 0,
                ss_size: size,
            };
            libc::sigaltstack(&ss, std::ptr::null_mut());
        }
        for sig in [
            libc::SIGSEGV,
            libc::SIGBUS,
            libc::SIGILL,
            libc::SIGFPE,
            libc::SIGABRT,
        ] {
            let mut action: libc::sigaction = std::mem::zeroed();
            action.sa_sigaction = on_fatal as *const () as usize;
            action.sa_flags = libc::SA_SIGINFO | libc::SA_ONSTACK | libc::SA_RESETHAND;
            libc::sigemptyset(&mut action.sa_mask);
            libc::sigaction(sig, &action, std::ptr::null_mut());
        }
    }
}

/// Reports the fault over the protocol, then lets the signal take its default action.  Only
/// async-signal-safe calls: atomics, write, signal, raise.
extern "C" fn on_fatal(signo: i32, info: *mut libc::siginfo_t, _ctx: *mut c_void) {
    // SAFETY: the kernel passes a valid siginfo to SA_SIGINFO handlers.
    let addr = unsafe { (*info).si_addr() } as u64;
    let page = PAGE.load(Ordering::Relaxed);
    let in_page = |start: u64| start != 0 && addr >= start && addr < start + page;
    // SAFETY: as above.  si_code > 0: the kernel generated the signal for a fault (SEGV_MAPERR,
    // FPE_INTDIV, …); otherwise a process sent it and si_addr overlaps the sender's pid.
    let faulted = unsafe { (*info).si_code } > 0;
    let fault = Fault {
        token: TOKEN.load(Ordering::Relaxed),
        signo,
        addr: if faulted { addr } else { 0 },
        faulted,
        out_of_memory: out_of_address_space(),
        in_guard: faulted
            && (in_page(GUARD_LO.load(Ordering::Relaxed))
                || in_page(GUARD_HI.load(Ordering::Relaxed))),
        y_base: Y_BASE.load(Ordering::Relaxed),
        n: CALL_N.load(Ordering::Relaxed),
    };
    let bytes = protocol::fault_bytes(&fault);
    let fd = PROTO_FD.swap(-1, Ordering::SeqCst);
    // SAFETY: write, signal and raise are async-signal-safe.
    unsafe {
        if fd >= 0 {
            libc::write(fd, bytes.as_ptr() as *const c_void, bytes.len());
        }
        libc::signal(signo, libc::SIG_DFL);
        libc::raise(signo);
    }
}

/// The soft `RLIMIT_AS` of this process, 0 when unlimited.
fn address_space_limit() -> u64 {
    let mut r = libc::rlimit {
        rlim_cur: 0,
        rlim_max: 0,
    };
    // SAFETY: getrlimit writes into r.
    if unsafe { libc::getrlimit(libc::RLIMIT_AS, &mut r) } != 0 || r.rlim_cur == libc::RLIM_INFINITY
    {
        return 0;
    }
    #[allow(clippy::unnecessary_cast)] // rlim_t is not u64 everywhere
    let limit = r.rlim_cur as u64;
    limit
}

/// Sets this thread's errno.
fn set_errno(value: i32) {
    // SAFETY: errno is thread-local and always writable.
    unsafe { *libc::__errno_location() = value };
}

/// Whether the worker has run out of its address-space limit, judged from a fault handler: the
/// last failed call of this thread was refused memory (errno ENOMEM; errno is cleared before
/// each kernel call), or the mappings (`/proc/self/statm`, first field, in pages) are within a
/// sixteenth of the limit.  Only open, read and close: async-signal-safe.
fn out_of_address_space() -> bool {
    let limit = AS_LIMIT.load(Ordering::Relaxed);
    if limit == 0 {
        return false;
    }
    // SAFETY: errno is readable in any thread.
    if unsafe { *libc::__errno_location() } == libc::ENOMEM {
        return true;
    }
    let mut buf = [0u8; 32];
    // SAFETY: a read-only open of a proc file into a stack buffer, then close.
    let got = unsafe {
        let fd = libc::open(
            c"/proc/self/statm".as_ptr(),
            libc::O_RDONLY | libc::O_CLOEXEC,
        );
        if fd < 0 {
            return false;
        }
        let got = libc::read(fd, buf.as_mut_ptr() as *mut c_void, buf.len());
        libc::close(fd);
        got
    };
    let mut pages = 0u64;
    for &b in buf.iter().take(got.max(0) as usize) {
        if !b.is_ascii_digit() {
            break;
        }
        pages = pages.saturating_mul(10).saturating_add((b - b'0') as u64);
    }
    let size = pages.saturating_mul(PAGE.load(Ordering::Relaxed));
    size >= limit - limit / 16
}
