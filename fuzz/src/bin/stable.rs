//! A fuzz driver for the stable toolchain: the same target bodies as the cargo-fuzz targets
//! (`fieldgrid_tests::fuzzing`), fed by a seeded mutation loop over the seed corpus instead
//! of libFuzzer's coverage-guided engine.
//!
//! Feedback without instrumentation: each target returns an outcome signature (the path the
//! input took: which error, which key, whether it solved); an input that reaches a signature
//! not seen before joins the in-memory corpus and is mutated further.
//!
//! Findings are written to the artifacts directory and reported:
//! - a panic (`crash-HASH`): caught, recorded once per panic message, the run goes on;
//! - a hang (`timeout-HASH`): one input running longer than `--timeout` seconds; the
//!   watchdog thread writes it and ends the run (exit 4);
//! - an out-of-memory (`oom-HASH`): live heap above `--rss-limit-mb`; the allocating thread
//!   is parked, the watchdog writes the input and ends the run (exit 5).
//!
//! ```text
//! cargo run --release --no-default-features --bin stable -- design --seconds 600 --seed 1
//! cargo run --release --no-default-features --bin stable -- expr --seconds 600 --seed 1
//! cargo run --release --no-default-features --bin stable -- design --replay FILE...
//! ```
//! Exit 0: no finding; 1: at least one crash; 2: usage.

use std::alloc::{GlobalAlloc, Layout, System};
use std::cell::Cell;
use std::collections::HashSet;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, AtomicU64, AtomicUsize, Ordering};
use std::sync::Mutex;
use std::time::{Duration, Instant};

// ---------------------------------------------------------------- memory accounting

/// Live heap bytes.
static LIVE: AtomicUsize = AtomicUsize::new(0);
/// Most live heap bytes allowed.
static LIMIT: AtomicUsize = AtomicUsize::new(usize::MAX);
/// Set when an allocation would pass the limit.
static OVER: AtomicBool = AtomicBool::new(false);
/// Largest live heap seen, bytes.
static PEAK: AtomicUsize = AtomicUsize::new(0);

thread_local! {
    /// The watchdog may allocate past the limit (to write the finding).
    static EXEMPT: Cell<bool> = const { Cell::new(false) };
}

struct Counting;

fn reserve(n: usize) {
    let now = LIVE.fetch_add(n, Ordering::Relaxed) + n;
    PEAK.fetch_max(now, Ordering::Relaxed);
    if now > LIMIT.load(Ordering::Relaxed) && !EXEMPT.with(|e| e.get()) {
        OVER.store(true, Ordering::SeqCst);
        // Parked for good: the watchdog writes the input and ends the process.
        loop {
            std::thread::sleep(Duration::from_secs(1));
        }
    }
}

// SAFETY: forwards to the system allocator; only the byte count is added.
unsafe impl GlobalAlloc for Counting {
    unsafe fn alloc(&self, l: Layout) -> *mut u8 {
        reserve(l.size());
        System.alloc(l)
    }
    unsafe fn alloc_zeroed(&self, l: Layout) -> *mut u8 {
        reserve(l.size());
        System.alloc_zeroed(l)
    }
    unsafe fn dealloc(&self, p: *mut u8, l: Layout) {
        System.dealloc(p, l);
        LIVE.fetch_sub(l.size(), Ordering::Relaxed);
    }
    unsafe fn realloc(&self, p: *mut u8, l: Layout, new: usize) -> *mut u8 {
        if new > l.size() {
            reserve(new - l.size());
        }
        let q = System.realloc(p, l, new);
        if new <= l.size() {
            LIVE.fetch_sub(l.size() - new, Ordering::Relaxed);
        }
        q
    }
}

#[global_allocator]
static ALLOC: Counting = Counting;

// ---------------------------------------------------------------- the input being run

/// The input now running (copied in before each execution).
static CURRENT: Mutex<Vec<u8>> = Mutex::new(Vec::new());
/// Milliseconds since the driver started when the current execution began; 0 when idle.
static BUSY_SINCE: AtomicU64 = AtomicU64::new(0);
/// The last panic's message and place.
static PANIC: Mutex<String> = Mutex::new(String::new());

fn fnv(bytes: &[u8]) -> String {
    let mut h: u64 = 0xcbf2_9ce4_8422_2325;
    for b in bytes {
        h ^= u64::from(*b);
        h = h.wrapping_mul(0x0000_0100_0000_01b3);
    }
    format!("{h:016x}")
}

fn save(dir: &Path, kind: &str, bytes: &[u8]) -> PathBuf {
    let _ = std::fs::create_dir_all(dir);
    let p = dir.join(format!("{kind}-{}", fnv(bytes)));
    let _ = std::fs::write(&p, bytes);
    p
}

fn watchdog(start: Instant, timeout: Duration, artifacts: PathBuf) {
    EXEMPT.with(|e| e.set(true));
    loop {
        std::thread::sleep(Duration::from_millis(50));
        let over = OVER.load(Ordering::SeqCst);
        let since = BUSY_SINCE.load(Ordering::SeqCst);
        let now = start.elapsed().as_millis() as u64;
        let hung = since != 0 && now.saturating_sub(since) > timeout.as_millis() as u64;
        if over || hung {
            // The main thread may hold no lock here: it copies the input before marking busy.
            let input = CURRENT.try_lock().map(|g| g.clone()).unwrap_or_default();
            let (kind, code) = if over { ("oom", 5) } else { ("timeout", 4) };
            let p = save(&artifacts, kind, &input);
            eprintln!(
                "FINDING {kind}: {} ({} bytes; live heap {} MiB)",
                p.display(),
                input.len(),
                LIVE.load(Ordering::Relaxed) >> 20
            );
            std::process::exit(code);
        }
    }
}

// ---------------------------------------------------------------- mutations

/// xorshift64*: small, seeded, reproducible.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_f491_4f6c_dd1d)
    }
    fn below(&mut self, n: usize) -> usize {
        if n == 0 {
            0
        } else {
            (self.next() % n as u64) as usize
        }
    }
    fn pick<'a>(&mut self, items: &[&'a str]) -> &'a str {
        items[self.below(items.len())]
    }
}

/// Numbers worth trying wherever a number stands.
const NUMBERS: &[&str] = &[
    "0",
    "-0.0",
    "1",
    "-1",
    "2",
    "0.5",
    "1e-3",
    "1e3",
    "1e-12",
    "1e12",
    "1e308",
    "-1e308",
    "1.7976931348623157e308",
    "1e-308",
    "5e-324",
    "2.5e-310",
    "1e16",
    "9007199254740993",
    "9223372036854775807",
    "-9223372036854775808",
    "nan",
    "inf",
    "-inf",
    "+inf",
    "3.0e6",
    "0.1",
    "0.30000000000000004",
    "1e-7",
    "4.4",
    "1e-9",
    "\"1/0\"",
    "\"pi\"",
    "\"gap*1e300\"",
    "\"sqrt(-1)\"",
    "\"g\"",
    "\"-g\"",
    "\"2*g\"",
    "\"g/3\"",
    "\"1e308*10\"",
    "\"\"",
];

/// Whole lines (or blocks) of design text that the reader knows.
const DESIGN_LINES: &[&str] = &[
    "[[conductor]]\nname = \"z\"\npotential = 1.0\ncircle = { center = [0.5, 0.5], radius = 0.1 }\n",
    "[[conductor]]\nname = \"w\"\nfloating = true\nrect = { x = [0.1, 0.2], y = [0.1, 0.9] }\n",
    "[[conductor]]\nname = \"t\"\npotential = -3.0\npolyline = [[0.2, 0.2], [0.5, 0.7], [0.8, 0.2]]\n",
    "[[dielectric]]\nname = \"k\"\npermittivity = 4.0\nrect = { x = [0.0, 1.0], y = [0.0, 0.3] }\n",
    "[[dielectric]]\nname = \"s\"\npermittivity = 1e6\nstrength = 1e7\ncircle = { center = [0.5, 0.5], radius = 0.45 }\n",
    "[[charge]]\nname = \"q\"\nat = [0.0, 0.5]\namount = 1e-9\n",
    "[[charge]]\nname = \"r\"\ndensity = 1e-3\nring = { center = [0.0, 0.5], inner = 0.1, outer = 0.2 }\n",
    "[[probe]]\nname = \"p\"\nat = [0.5, 0.5]\n",
    "[parameters]\ng = 0.1\n",
    "[sides]\ntop = \"open\"\n",
    "[background]\npermittivity = 2.0\nstrength = 3e6\n",
    "[grid]\nx = [0.0, 1.0]\ny = [0.0, 1.0]\ncell = 0.05\n",
    "mode = \"axisymmetric\"",
    "mode = \"planar\"",
    "unit = \"um\"",
    "unit = \"mm\"",
    "depth = 1.0",
    "left = \"symmetry\"",
    "right = \"open\"",
    "bottom = 5.0",
    "top = \"ground\"",
    "round = 0.05",
    "floating = true",
    "potential = 0.0",
    "cell = 1e-9",
    "cell = 0.3",
    "polygon = [[0.1, 0.1], [0.4, 0.1], [0.4, 0.4], [0.1, 0.4]]",
    "polygon = [[0.1, 0.1], [0.4, 0.4], [0.4, 0.1], [0.1, 0.4]]",
    "polygon = [[0.1, 0.1], [0.9, 0.1], [0.5, 0.1000000000001]]",
    "holes = [[[0.2, 0.2], [0.3, 0.2], [0.3, 0.3]]]",
    "polyline = [[0.1, 0.5], [0.9, 0.5]]",
    "ring = { center = [0.5, 0.5], inner = 0.1, outer = 0.2 }",
    "circle = { center = [0.0, 0.0], radius = 1e-12 }",
    "rect = { x = [0.0, 1.0], y = [0.5, 0.5000001] }",
    "x = [0.0, 1e-300]",
    "y = [-1e300, 1e300]",
    "svg = { file = \"svg/shapes.svg\", id = \"pad\" }",
    "svg = { file = \"svg/shapes.svg\", id = \"blob\" }",
    "svg = { file = \"svg/shapes.svg\", id = \"tri\" }",
    "svg = { file = \"svg/shapes.svg\", id = \"nope\" }",
    "svg = { file = \"/dev/zero\", id = \"a\" }",
    "svg = { file = \"svg\", id = \"a\" }",
    "svg = { file = \"fuzz.toml\", id = \"a\" }",
];

/// Tokens of the expression language and its edges.
const EXPR_TOKENS: &[&str] = &[
    "+",
    "-",
    "*",
    "/",
    "^",
    "**",
    "(",
    ")",
    ",",
    " ",
    "pi",
    "e",
    "sqrt(",
    "abs(",
    "exp(",
    "ln(",
    "log(",
    "log10(",
    "sin(",
    "asin(",
    "acos(",
    "atan2(",
    "hypot(",
    "floor(",
    "ceil(",
    "round(",
    "min(",
    "max(",
    "a",
    "gap",
    "zero",
    "big",
    "tiny",
    "neg",
    "1e308",
    "0",
    "1e-320",
    ".5",
    "5.",
    "1e",
    "e5",
    "1e+",
    "0x10",
    "µ",
    "é",
    "\u{2212}",
    "\u{0}",
    "99999999999999999999",
];

const BYTES: &[u8] = b"[]{}\"'=,.-+*/^()#\n 0123456789eEnaifx_\t\\";

fn lines_of(bytes: &[u8]) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    let mut start = 0;
    for (i, &b) in bytes.iter().enumerate() {
        if b == b'\n' {
            out.push((start, i + 1));
            start = i + 1;
        }
    }
    if start < bytes.len() {
        out.push((start, bytes.len()));
    }
    out
}

/// Byte ranges of the number literals in the text.
fn numbers_of(bytes: &[u8]) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    let mut i = 0;
    while i < bytes.len() {
        let starts = bytes[i].is_ascii_digit()
            || (bytes[i] == b'-' && bytes.get(i + 1).is_some_and(|b| b.is_ascii_digit()));
        if starts && (i == 0 || !bytes[i - 1].is_ascii_alphanumeric()) {
            let s = i;
            i += 1;
            while i < bytes.len() && (bytes[i].is_ascii_digit() || b".eE_+-".contains(&bytes[i])) {
                i += 1;
            }
            out.push((s, i));
        } else {
            i += 1;
        }
    }
    out
}

fn mutate(
    rng: &mut Rng,
    input: &[u8],
    corpus: &[Vec<u8>],
    design: bool,
    max_len: usize,
) -> Vec<u8> {
    let mut b = input.to_vec();
    let ops = 1 + rng.below(4);
    for _ in 0..ops {
        match rng.below(if design { 11 } else { 7 }) {
            0 => {
                if !b.is_empty() {
                    let at = rng.below(b.len());
                    let len = 1 + rng.below(8.min(b.len() - at));
                    b.drain(at..at + len);
                }
            }
            1 => {
                let at = rng.below(b.len() + 1);
                b.insert(at, BYTES[rng.below(BYTES.len())]);
            }
            2 => {
                if !b.is_empty() {
                    let at = rng.below(b.len());
                    b[at] = if rng.below(4) == 0 {
                        rng.next() as u8
                    } else {
                        BYTES[rng.below(BYTES.len())]
                    };
                }
            }
            3 => {
                if !b.is_empty() {
                    let at = rng.below(b.len());
                    let len = 1 + rng.below(32.min(b.len() - at));
                    let chunk = b[at..at + len].to_vec();
                    let to = rng.below(b.len() + 1);
                    b.splice(to..to, chunk);
                }
            }
            4 => {
                let nums = numbers_of(&b);
                if !nums.is_empty() {
                    let (s, e) = nums[rng.below(nums.len())];
                    b.splice(s..e, rng.pick(NUMBERS).bytes());
                }
            }
            5 => {
                // Splice a piece of another corpus entry.
                let other = &corpus[rng.below(corpus.len())];
                if !other.is_empty() {
                    let at = rng.below(other.len());
                    let len = 1 + rng.below(64.min(other.len() - at));
                    let to = rng.below(b.len() + 1);
                    b.splice(to..to, other[at..at + len].iter().copied());
                }
            }
            6 if !design => {
                let at = rng.below(b.len() + 1);
                b.splice(at..at, rng.pick(EXPR_TOKENS).bytes());
            }
            6 => {
                let ls = lines_of(&b);
                let at = if ls.is_empty() {
                    0
                } else {
                    ls[rng.below(ls.len())].0
                };
                let mut line = rng.pick(DESIGN_LINES).as_bytes().to_vec();
                if line.last() != Some(&b'\n') {
                    line.push(b'\n');
                }
                b.splice(at..at, line);
            }
            7 => {
                let ls = lines_of(&b);
                if !ls.is_empty() {
                    let (s, e) = ls[rng.below(ls.len())];
                    b.drain(s..e);
                }
            }
            8 => {
                let ls = lines_of(&b);
                if !ls.is_empty() {
                    let (s, e) = ls[rng.below(ls.len())];
                    let line = b[s..e].to_vec();
                    let to = ls[rng.below(ls.len())].0;
                    b.splice(to..to, line);
                }
            }
            9 => {
                // Perturb a number: scale, negate or nudge it.
                let nums = numbers_of(&b);
                if !nums.is_empty() {
                    let (s, e) = nums[rng.below(nums.len())];
                    if let Some(v) = std::str::from_utf8(&b[s..e])
                        .ok()
                        .and_then(|t| t.replace('_', "").parse::<f64>().ok())
                    {
                        let w = match rng.below(5) {
                            0 => -v,
                            1 => v * 2.0,
                            2 => v * 0.5,
                            3 => v * (1.0 + f64::EPSILON),
                            _ => v + 1e-12,
                        };
                        b.splice(s..e, format!("{w:?}").bytes());
                    }
                }
            }
            _ => {
                // Splice whole lines of another corpus entry.
                let other = &corpus[rng.below(corpus.len())];
                let ls = lines_of(other);
                if !ls.is_empty() {
                    let k = rng.below(ls.len());
                    let k2 = (k + rng.below(4)).min(ls.len() - 1);
                    let (s, e) = (ls[k].0, ls[k2].1);
                    let lb = lines_of(&b);
                    let to = if lb.is_empty() {
                        0
                    } else {
                        lb[rng.below(lb.len())].0
                    };
                    b.splice(to..to, other[s..e].iter().copied());
                }
            }
        }
    }
    b.truncate(max_len);
    b
}

// ---------------------------------------------------------------- the loop

struct Options {
    target: String,
    seconds: f64,
    runs: u64,
    seed: u64,
    corpus: PathBuf,
    artifacts: PathBuf,
    timeout: f64,
    rss_limit_mb: usize,
    max_len: usize,
    replay: Vec<PathBuf>,
}

fn usage() -> ! {
    eprintln!(
        "usage: stable design|expr [--seconds S] [--runs N] [--seed N] [--corpus DIR] \
         [--artifacts DIR] [--timeout S] [--rss-limit-mb MB] [--max-len BYTES] [--replay FILE...]"
    );
    std::process::exit(2);
}

fn options() -> Options {
    let here = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut args = std::env::args().skip(1);
    let target = args.next().unwrap_or_else(|| usage());
    if target != "design" && target != "expr" {
        usage();
    }
    let mut o = Options {
        corpus: here.join("corpus").join(&target),
        artifacts: here.join("artifacts").join(format!("stable-{target}")),
        max_len: if target == "design" { 4096 } else { 512 },
        target,
        seconds: 60.0,
        runs: u64::MAX,
        seed: 1,
        timeout: 10.0,
        rss_limit_mb: 2048,
        replay: Vec::new(),
    };
    let rest: Vec<String> = args.collect();
    let mut i = 0;
    let value = |i: usize| rest.get(i + 1).cloned().unwrap_or_else(|| usage());
    while i < rest.len() {
        match rest[i].as_str() {
            "--seconds" => o.seconds = value(i).parse().unwrap_or_else(|_| usage()),
            "--runs" => o.runs = value(i).parse().unwrap_or_else(|_| usage()),
            "--seed" => o.seed = value(i).parse().unwrap_or_else(|_| usage()),
            "--corpus" => o.corpus = value(i).into(),
            "--artifacts" => o.artifacts = value(i).into(),
            "--timeout" => o.timeout = value(i).parse().unwrap_or_else(|_| usage()),
            "--rss-limit-mb" => o.rss_limit_mb = value(i).parse().unwrap_or_else(|_| usage()),
            "--max-len" => o.max_len = value(i).parse().unwrap_or_else(|_| usage()),
            "--replay" => {
                o.replay = rest[i + 1..].iter().map(PathBuf::from).collect();
                break;
            }
            _ => usage(),
        }
        i += 2;
    }
    o
}

fn main() {
    let o = options();
    let start = Instant::now();
    let _ = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build_global();
    LIMIT.store(o.rss_limit_mb << 20, Ordering::Relaxed);
    {
        let (timeout, artifacts) = (Duration::from_secs_f64(o.timeout), o.artifacts.clone());
        std::thread::spawn(move || watchdog(start, timeout, artifacts));
    }
    std::panic::set_hook(Box::new(|info| {
        if let Ok(mut p) = PANIC.lock() {
            *p = info.to_string();
        }
    }));
    let target: fn(&[u8]) -> String = if o.target == "design" {
        fieldgrid_tests::fuzzing::design_target
    } else {
        fieldgrid_tests::fuzzing::expr_target
    };
    let run = |input: &[u8]| -> Result<String, String> {
        if let Ok(mut c) = CURRENT.lock() {
            c.clear();
            c.extend_from_slice(input);
        }
        BUSY_SINCE.store(start.elapsed().as_millis().max(1) as u64, Ordering::SeqCst);
        let r = std::panic::catch_unwind(|| target(input));
        BUSY_SINCE.store(0, Ordering::SeqCst);
        r.map_err(|_| PANIC.lock().map(|p| p.clone()).unwrap_or_default())
    };

    if !o.replay.is_empty() {
        let mut failed = 0;
        for f in &o.replay {
            let bytes = std::fs::read(f).unwrap_or_else(|e| panic!("{}: {e}", f.display()));
            match run(&bytes) {
                Ok(sig) => println!("{}: ok ({sig})", f.display()),
                Err(m) => {
                    failed += 1;
                    println!("{}: PANIC {m}", f.display());
                }
            }
        }
        std::process::exit(if failed > 0 { 1 } else { 0 });
    }

    let mut corpus: Vec<Vec<u8>> = Vec::new();
    let mut files: Vec<PathBuf> = std::fs::read_dir(&o.corpus)
        .unwrap_or_else(|e| panic!("{}: {e}", o.corpus.display()))
        .filter_map(|e| e.ok().map(|e| e.path()))
        .filter(|p| p.is_file())
        .collect();
    files.sort();
    for f in &files {
        corpus.push(std::fs::read(f).unwrap_or_default());
    }
    if corpus.is_empty() {
        corpus.push(Vec::new());
    }
    let mut seen: HashSet<String> = HashSet::new();
    let mut crashes: HashSet<String> = HashSet::new();
    let mut execs: u64 = 0;
    for input in corpus.clone() {
        execs += 1;
        match run(&input) {
            Ok(sig) => {
                seen.insert(sig);
            }
            Err(m) => {
                let p = save(&o.artifacts, "crash", &input);
                eprintln!("FINDING crash in a seed: {} : {m}", p.display());
                crashes.insert(m);
            }
        }
    }
    let seeds = corpus.len();
    println!(
        "fuzzing `{}` with seed {} for {} s: {seeds} seeds, {} outcome signatures",
        o.target,
        o.seed,
        o.seconds,
        seen.len()
    );
    let mut rng = Rng(o.seed.wrapping_mul(0x9e37_79b9_7f4a_7c15) | 1);
    let mut last_report = Instant::now();
    while start.elapsed().as_secs_f64() < o.seconds && execs < o.runs {
        let base = &corpus[rng.below(corpus.len())];
        let input = mutate(&mut rng, base, &corpus, o.target == "design", o.max_len);
        execs += 1;
        match run(&input) {
            Ok(sig) => {
                if seen.insert(sig) && corpus.len() < 20_000 {
                    corpus.push(input);
                }
            }
            Err(m) => {
                let key = m.lines().next().unwrap_or_default().to_string();
                if crashes.insert(key) {
                    let p = save(&o.artifacts, "crash", &input);
                    eprintln!("FINDING crash: {} : {m}", p.display());
                }
            }
        }
        if last_report.elapsed() > Duration::from_secs(30) {
            last_report = Instant::now();
            let s = start.elapsed().as_secs_f64();
            println!(
                "#{execs} {s:.0} s {:.0} exec/s corpus {} signatures {} crashes {} peak heap {} MiB",
                execs as f64 / s,
                corpus.len(),
                seen.len(),
                crashes.len(),
                PEAK.load(Ordering::Relaxed) >> 20
            );
        }
    }
    let s = start.elapsed().as_secs_f64();
    println!(
        "done: {execs} executions in {s:.0} s ({:.0} exec/s), corpus {} ({seeds} seeds), {} \
         outcome signatures, {} distinct crashes, peak heap {} MiB",
        execs as f64 / s,
        corpus.len(),
        seen.len(),
        crashes.len(),
        PEAK.load(Ordering::Relaxed) >> 20
    );
    std::process::exit(if crashes.is_empty() { 0 } else { 1 });
}
