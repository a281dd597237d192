//! The bounded fuzzing harness shared by `tests/fuzz_parsers.rs`: a deterministic random source,
//! mutations of sample inputs, a watchdog against hangs and an allocation cap against unbounded
//! allocation.
//!
//! Budget: `DILATA_FUZZ_CASES` cases per target (default [`DEFAULT_CASES`]) and at most
//! `DILATA_FUZZ_SECONDS` seconds per target (default [`DEFAULT_SECONDS`]); whichever ends first.
//! `DILATA_FUZZ_SEED` changes the seed (default fixed, so that a plain `cargo test` is
//! reproducible). A failing case is saved under `tests/fuzz_corpus/<target>/`; a case that made
//! the process abort (an allocation far too large) is named on standard error, and
//! `DILATA_FUZZ_SAVE=<case>` with the same seed saves its input without running it.

use std::alloc::{GlobalAlloc, Layout, System};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, AtomicUsize, Ordering};
use std::sync::mpsc;
use std::time::{Duration, Instant};

/// Cases per target when `DILATA_FUZZ_CASES` is not set: about a second inside the normal run.
pub const DEFAULT_CASES: u64 = 1000;
/// Seconds per target at most when `DILATA_FUZZ_SECONDS` is not set.
pub const DEFAULT_SECONDS: u64 = 60;
/// A case that runs longer than this is reported as a hang.
pub const CASE_TIMEOUT: Duration = Duration::from_secs(60);
/// Largest single allocation a case may request. A mesh sample is a few kilobytes, so anything
/// near this is sized by a count read from the input rather than by the data it holds; a
/// scenario may ask for a generated body of up to `MAX_GENERATED_CELLS` cells, whose arrays stay
/// below this.
pub const MAX_ALLOCATION: usize = 1 << 30;

/// Largest allocation request seen since the last reset.
static LARGEST_REQUEST: AtomicUsize = AtomicUsize::new(0);
/// The case being run, for the message of a refused allocation.
static CURRENT_CASE: AtomicU64 = AtomicU64::new(0);

/// Say which case asked for `size` bytes, without allocating (called just before the process
/// aborts on a refused request). `DILATA_FUZZ_SAVE=<case>` then saves that case's input.
fn report_refusal(size: usize) {
    let mut buf = [0_u8; 160];
    let mut len = 0;
    let mut put = |bytes: &[u8]| {
        let n = bytes.len().min(buf.len() - len);
        buf[len..len + n].copy_from_slice(&bytes[..n]);
        len += n;
    };
    put(b"\nfuzz: case ");
    put(digits(CURRENT_CASE.load(Ordering::Relaxed), &mut [0; 20]));
    put(b" asked for ");
    put(digits(size as u64, &mut [0; 20]));
    put(b" bytes; DILATA_FUZZ_SAVE=<that case> saves its input\n");
    let _ = std::io::stderr().write_all(&buf[..len]);
}

/// Decimal digits of `v` in `scratch`.
fn digits(mut v: u64, scratch: &mut [u8; 20]) -> &[u8] {
    let mut at = scratch.len();
    loop {
        at -= 1;
        scratch[at] = b'0' + (v % 10) as u8;
        v /= 10;
        if v == 0 {
            return &scratch[at..];
        }
    }
}

/// The system allocator that remembers the largest request and refuses (aborting the process
/// with "memory allocation of N bytes failed") any request above 4 × [`MAX_ALLOCATION`]
/// instead of letting the machine run out of memory.
pub struct CappedAllocator;

// SAFETY: every call is forwarded to `System` unchanged, or refused with a null pointer, which
// the `GlobalAlloc` contract allows.
unsafe impl GlobalAlloc for CappedAllocator {
    unsafe fn alloc(&self, layout: Layout) -> *mut u8 {
        LARGEST_REQUEST.fetch_max(layout.size(), Ordering::Relaxed);
        if layout.size() > 4 * MAX_ALLOCATION {
            report_refusal(layout.size());
            return std::ptr::null_mut();
        }
        unsafe { System.alloc(layout) }
    }

    unsafe fn dealloc(&self, ptr: *mut u8, layout: Layout) {
        unsafe { System.dealloc(ptr, layout) }
    }

    unsafe fn realloc(&self, ptr: *mut u8, layout: Layout, new_size: usize) -> *mut u8 {
        LARGEST_REQUEST.fetch_max(new_size, Ordering::Relaxed);
        if new_size > 4 * MAX_ALLOCATION {
            report_refusal(new_size);
            return std::ptr::null_mut();
        }
        unsafe { System.realloc(ptr, layout, new_size) }
    }
}

/// xorshift64* (Vigna 2016, "An experimental exploration of Marsaglia's xorshift generators,
/// scrambled", from memory): deterministic and dependency-free.
pub struct Rng(u64);

impl Rng {
    /// A generator from a seed (any value; zero is replaced).
    pub fn new(seed: u64) -> Rng {
        Rng(seed.wrapping_mul(0x9E37_79B9_7F4A_7C15) | 1)
    }

    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        let mut x = self.0;
        x ^= x >> 12;
        x ^= x << 25;
        x ^= x >> 27;
        self.0 = x;
        x.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }

    /// Uniform in `0..n` (`n` > 0).
    pub fn below(&mut self, n: usize) -> usize {
        (self.next_u64() % n as u64) as usize
    }

    /// One of `items`.
    pub fn pick<'a, T>(&mut self, items: &'a [T]) -> &'a T {
        &items[self.below(items.len())]
    }
}

/// Numbers that break naive parsers: overflow, signs, special values, huge counts.
pub const HOSTILE_NUMBERS: [&str; 16] = [
    "0",
    "-1",
    "-0",
    "4294967295",
    "4294967296",
    "2147483648",
    "9223372036854775807",
    "18446744073709551615",
    "18446744073709551616",
    "99999999999999999999999",
    "1e308",
    "1e999",
    "-1e308",
    "1e-320",
    "nan",
    "inf",
];

/// Byte-level mutations: overwrite, flip a bit, insert, delete a range, duplicate a range,
/// truncate, and replace a run of digits by a hostile number. `binary` adds overwriting eight
/// bytes with a huge little-endian integer (a count in a binary header).
pub fn mutate_bytes(rng: &mut Rng, input: &mut Vec<u8>, binary: bool) {
    let n_edits = 1 + rng.below(6);
    for _ in 0..n_edits {
        let len = input.len();
        if len == 0 {
            input.push(rng.next_u64() as u8);
            continue;
        }
        let at = rng.below(len);
        match rng.below(if binary { 8 } else { 7 }) {
            0 => input[at] = rng.next_u64() as u8,
            1 => input[at] ^= 1 << rng.below(8),
            2 => input.insert(at, rng.next_u64() as u8),
            3 => {
                let end = (at + 1 + rng.below(64)).min(len);
                input.drain(at..end);
            }
            4 => {
                let end = (at + 1 + rng.below(64)).min(len);
                let chunk = input[at..end].to_vec();
                let to = rng.below(input.len() + 1);
                input.splice(to..to, chunk);
            }
            5 => input.truncate(at),
            6 => replace_number(rng, input, at),
            _ => {
                let value = *rng.pick(&[u64::MAX, 1 << 40, 1 << 32, i64::MAX as u64, 1 << 62]);
                let end = (at + 8).min(len);
                input[at..end].copy_from_slice(&value.to_le_bytes()[..end - at]);
            }
        }
    }
}

/// Replace the run of digits at or after `at` by a hostile number.
fn replace_number(rng: &mut Rng, input: &mut Vec<u8>, at: usize) {
    let Some(start) = (at..input.len()).find(|&i| input[i].is_ascii_digit()) else {
        return;
    };
    let end = (start..input.len())
        .find(|&i| !(input[i].is_ascii_digit() || matches!(input[i], b'.' | b'e' | b'E' | b'-')))
        .unwrap_or(input.len());
    let number = rng.pick(&HOSTILE_NUMBERS).as_bytes().to_vec();
    input.splice(start..end, number);
}

/// Line-level mutations of a text: swap the keys of two `key = value` lines, swap two lines,
/// delete or duplicate a line, and replace a number by a hostile one; followed, sometimes, by
/// byte-level mutations.
pub fn mutate_text(rng: &mut Rng, text: &str) -> Vec<u8> {
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let n_edits = 1 + rng.below(4);
    for _ in 0..n_edits {
        if lines.is_empty() {
            break;
        }
        let a = rng.below(lines.len());
        let b = rng.below(lines.len());
        match rng.below(5) {
            0 => {
                let key = |l: &str| l.split_once('=').map(|(k, _)| k.to_string());
                if let (Some(ka), Some(kb)) = (key(&lines[a]), key(&lines[b])) {
                    let va = lines[a][ka.len()..].to_string();
                    let vb = lines[b][kb.len()..].to_string();
                    lines[a] = format!("{kb}{va}");
                    lines[b] = format!("{ka}{vb}");
                }
            }
            1 => lines.swap(a, b),
            2 => {
                lines.remove(a);
            }
            3 => {
                let copy = lines[a].clone();
                lines.insert(b, copy);
            }
            _ => {
                let mut bytes = lines[a].clone().into_bytes();
                if !bytes.is_empty() {
                    let at = rng.below(bytes.len());
                    replace_number(rng, &mut bytes, at);
                }
                lines[a] = String::from_utf8_lossy(&bytes).into_owned();
            }
        }
    }
    let mut bytes = lines.join("\n").into_bytes();
    bytes.push(b'\n');
    if rng.below(3) == 0 {
        mutate_bytes(rng, &mut bytes, false);
    }
    bytes
}

/// The fuzzing budget from the environment.
pub struct Budget {
    /// Cases per target.
    pub cases: u64,
    /// Wall time per target.
    pub time: Duration,
    /// Base seed.
    pub seed: u64,
    /// Only save the input of this case (`DILATA_FUZZ_SAVE`), do not run anything.
    pub save: Option<u64>,
}

impl Budget {
    /// Read `DILATA_FUZZ_CASES`, `DILATA_FUZZ_SECONDS` and `DILATA_FUZZ_SEED`; a value that is
    /// not a whole number is a mistake of the person running the tests and panics.
    pub fn from_env() -> Budget {
        let var = |name: &str, default: u64| match std::env::var(name) {
            Ok(v) => v
                .trim()
                .parse()
                .unwrap_or_else(|_| panic!("{name} must be a whole number, found '{v}'")),
            Err(_) => default,
        };
        Budget {
            cases: var("DILATA_FUZZ_CASES", DEFAULT_CASES),
            time: Duration::from_secs(var("DILATA_FUZZ_SECONDS", DEFAULT_SECONDS)),
            seed: var("DILATA_FUZZ_SEED", 0x00D1_1A7A),
            save: std::env::var("DILATA_FUZZ_SAVE")
                .is_ok()
                .then(|| var("DILATA_FUZZ_SAVE", 0)),
        }
    }
}

/// Run `target` on inputs made by `make` (from a per-case generator) until the budget ends.
/// A panic, a case longer than [`CASE_TIMEOUT`] or an allocation above [`MAX_ALLOCATION`]
/// saves the input under `tests/fuzz_corpus/<name>/new-<case>.<ext>` and fails. Prints and
/// returns the number of cases run.
pub fn run_target(
    name: &str,
    ext: &str,
    budget: &Budget,
    make: &dyn Fn(&mut Rng) -> Vec<u8>,
    target: fn(&[u8]) -> bool,
) -> u64 {
    let case_rng = |case: u64| Rng::new(budget.seed ^ (case + 1).wrapping_mul(0x1000_0000_01B3));
    if let Some(case) = budget.save {
        let path = save_crash(name, ext, case, &make(&mut case_rng(case)));
        let _ = writeln!(std::io::stderr(), "fuzz {name}: saved {}", path.display());
        return 1;
    }
    let started = Instant::now();
    let mut done = 0;
    let mut accepted = 0;
    while done < budget.cases && started.elapsed() < budget.time {
        let input = make(&mut case_rng(done));
        CURRENT_CASE.store(done, Ordering::Relaxed);
        LARGEST_REQUEST.store(0, Ordering::Relaxed);
        let (failure, ok) = match run_case(&input, target) {
            Ok(ok) => (None, ok),
            Err(what) => (Some(what), false),
        };
        accepted += u64::from(ok);
        let largest = LARGEST_REQUEST.load(Ordering::Relaxed);
        let failure = failure.or_else(|| {
            (largest > MAX_ALLOCATION).then(|| format!("an allocation of {largest} bytes"))
        });
        if let Some(what) = failure {
            let path = save_crash(name, ext, done, &input);
            panic!(
                "{name}, case {done}: {what}; input saved as {} (move it into the corpus)",
                path.display()
            );
        }
        done += 1;
    }
    let line = format!(
        "fuzz {name}: {done} cases ({accepted} accepted, the rest refused with errors) in {:.1} s, \
         no failure\n",
        started.elapsed().as_secs_f64()
    );
    // Straight to the terminal, past the test harness's capture, so that CI logs show it.
    let _ = std::io::stderr().write_all(line.as_bytes());
    done
}

/// One case on a watchdog thread: whether the target accepted the input, or a description of
/// a panic or a timeout.
fn run_case(input: &[u8], target: fn(&[u8]) -> bool) -> Result<bool, String> {
    let owned = input.to_vec();
    let (tx, rx) = mpsc::channel();
    std::thread::spawn(move || {
        let result = std::panic::catch_unwind(|| target(&owned));
        let _ = tx.send(result.map_err(|p| {
            p.downcast_ref::<String>()
                .cloned()
                .or_else(|| p.downcast_ref::<&str>().map(|s| s.to_string()))
                .unwrap_or_else(|| "a panic".into())
        }));
    });
    match rx.recv_timeout(CASE_TIMEOUT) {
        Ok(Ok(accepted)) => Ok(accepted),
        Ok(Err(message)) => Err(format!("panic: {message}")),
        Err(_) => Err(format!("no answer within {} s", CASE_TIMEOUT.as_secs())),
    }
}

fn save_crash(name: &str, ext: &str, case: u64, input: &[u8]) -> PathBuf {
    let dir = corpus_dir().join(name);
    let _ = std::fs::create_dir_all(&dir);
    let path = dir.join(format!("new-{case}.{ext}"));
    let _ = std::fs::write(&path, input);
    path
}

/// `tests/fuzz_corpus`: inputs that once crashed a parser, replayed by the tests.
pub fn corpus_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fuzz_corpus")
}

/// Files of one corpus subdirectory, sorted.
pub fn corpus_files(name: &str) -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(corpus_dir().join(name))
        .map(|d| d.filter_map(|e| e.ok().map(|e| e.path())).collect())
        .unwrap_or_default();
    files.retain(|p| p.is_file() && p.extension().is_some_and(|e| e != "md"));
    files.sort();
    files
}
