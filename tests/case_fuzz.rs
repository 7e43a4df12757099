//! Seeded fuzzing of the case parser through the real binary: mutants of the small chamber (bytes changed,
//! lines dropped or repeated, numbers replaced by extreme values, keys renamed) are given to `estimate`, which
//! must exit 0, 1 or 2 — never panic (101), abort (134) or hang — within a time and address-space bound.
//! 200 mutants here; `cargo test --release --test case_fuzz -- --ignored` runs 5000.

use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

mod common;

const ADDRESS_SPACE_KIB: u64 = 2 * 1024 * 1024;
const TIME_LIMIT: Duration = Duration::from_secs(30);

/// A small seeded generator (64-bit LCG, Knuth's MMIX constants).
struct Lcg(u64);
impl Lcg {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        self.0 >> 16
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

const EXTREMES: [&str; 12] =
    ["0", "-1", "1e300", "-1e300", "1e-300", "nan", "inf", "1e9", "\"1 nm\"", "\"1e300 um\"", "\"\"", "[]"];

fn mutate(text: &str, random: &mut Lcg) -> String {
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    for _ in 0..1 + random.below(3) {
        let k = random.below(lines.len());
        match random.below(6) {
            0 => {
                lines.remove(k);
            }
            1 => {
                let copy = lines[k].clone();
                lines.insert(k, copy);
            }
            2 => {
                // A value replaced by an extreme one.
                if let Some((key, _)) = lines[k].split_once('=') {
                    lines[k] = format!("{key}= {}", EXTREMES[random.below(EXTREMES.len())]);
                }
            }
            3 => {
                // One byte changed to a random printable or structural character.
                let mut bytes = lines[k].clone().into_bytes();
                if !bytes.is_empty() {
                    let i = random.below(bytes.len());
                    bytes[i] = b"[]{}=\",.#x9 \\"[random.below(13)];
                }
                lines[k] = String::from_utf8_lossy(&bytes).into_owned();
            }
            4 => {
                // A key renamed.
                if let Some((key, value)) = lines[k].split_once('=') {
                    lines[k] = format!("{}x ={value}", key.trim());
                }
            }
            _ => {
                // Two lines swapped (moves keys between tables).
                let j = random.below(lines.len());
                lines.swap(k, j);
            }
        }
    }
    lines.join("\n") + "\n"
}

fn fuzz(mutants: usize, seed: u64) {
    let dir = std::env::temp_dir().join(format!("plumefield-fuzz-{}-{seed}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).expect("temp dir");
    let base = common::small_chamber(&[]);
    let mut random = Lcg(seed);
    let mut codes = [0usize; 3];
    for n in 0..mutants {
        let text = mutate(&base, &mut random);
        let path = dir.join("mutant.toml");
        std::fs::write(&path, &text).expect("write mutant");
        let mut child = Command::new("sh")
            .arg("-c")
            .arg(format!("ulimit -v {ADDRESS_SPACE_KIB} && exec \"$0\" \"$@\""))
            .arg(env!("CARGO_BIN_EXE_plumefield"))
            .args(["estimate", path.to_str().expect("utf-8")])
            .stdout(Stdio::null())
            .stderr(Stdio::piped())
            .spawn()
            .expect("start");
        let started = Instant::now();
        let status = loop {
            if let Some(status) = child.try_wait().expect("poll") {
                break status;
            }
            if started.elapsed() > TIME_LIMIT {
                let _ = child.kill();
                panic!("mutant {n} (seed {seed}) ran over {TIME_LIMIT:?}:\n{text}");
            }
            std::thread::sleep(Duration::from_millis(5));
        };
        let stderr = std::io::read_to_string(child.stderr.take().expect("stderr")).unwrap_or_default();
        match status.code() {
            Some(code @ 0..=2) => codes[code as usize] += 1,
            other => panic!("mutant {n} (seed {seed}) exited with {other:?}:\n{text}\n{stderr}"),
        }
        if status.code() == Some(2) {
            assert!(
                stderr.starts_with("error: ") && stderr.trim().lines().count() == 1,
                "mutant {n}: {stderr}"
            );
        }
    }
    assert!(codes[2] > 0 && codes[0] > 0, "the mutants should include good and bad cases: {codes:?}");
    let _ = std::fs::remove_dir_all(Path::new(&dir));
}

#[test]
fn mutated_cases_never_panic() {
    fuzz(200, 16);
}

#[test]
#[ignore = "long: 5000 mutants"]
fn many_mutated_cases_never_panic() {
    fuzz(5000, 1605);
}
