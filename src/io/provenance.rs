//! Provenance stamped into every output: which program revision produced it, from which case text, and when.
//! Without it a result file found on a cluster months later cannot be trusted or reproduced (STYLE.md item 13).

use std::path::Path;
use std::process::Command;
use std::time::{SystemTime, UNIX_EPOCH};

/// The git revision of the source this executable was built from, `None` when unknown.
///
/// A revision fixed at compile time (environment variable `PLUMEFIELD_GIT_REVISION`, e.g. set by a build
/// script) wins. Otherwise git is asked at run time in the package's source directory, if that directory
/// still exists on this machine; a `-dirty` suffix marks uncommitted changes to tracked files. The run-time
/// answer can be wrong for a binary copied elsewhere while its source tree moved on, hence the preference.
/// Git is asked once per process: a sweep writes many cases, and two `git` runs per case (about 15 ms, more
/// on a loaded machine) were a large fixed cost of tiny cases.
pub fn git_revision() -> Option<String> {
    static REVISION: std::sync::OnceLock<Option<String>> = std::sync::OnceLock::new();
    REVISION
        .get_or_init(|| {
            if let Some(rev) = option_env!("PLUMEFIELD_GIT_REVISION") {
                let rev = rev.trim();
                if !rev.is_empty() && rev != "unknown" {
                    return Some(rev.to_string());
                }
            }
            git_revision_of(Path::new(env!("CARGO_MANIFEST_DIR")))
        })
        .clone()
}

/// `git rev-parse HEAD` in `dir` (plus `-dirty` when tracked files differ from HEAD); `None` when `dir` is
/// not a git work tree or git is not installed.
pub fn git_revision_of(dir: &Path) -> Option<String> {
    if !dir.is_dir() {
        return None;
    }
    let out = Command::new("git").arg("-C").arg(dir).args(["rev-parse", "--verify", "HEAD"]).output().ok()?;
    if !out.status.success() {
        return None;
    }
    let rev = String::from_utf8(out.stdout).ok()?.trim().to_string();
    if rev.len() < 7 || !rev.chars().all(|c| c.is_ascii_hexdigit()) {
        return None;
    }
    let status = Command::new("git")
        .arg("-C")
        .arg(dir)
        .args(["status", "--porcelain", "--untracked-files=no"])
        .output()
        .ok()?;
    let dirty = status.status.success() && !status.stdout.is_empty();
    Some(if dirty { format!("{rev}-dirty") } else { rev })
}

/// Lower-case hexadecimal SHA-256 of `bytes`, used for the `case_sha256` stamp.
pub use numkit::sha256_hex;

/// Creation time for output stamps as ISO 8601 UTC (`2024-05-01T12:34:56Z`). Honours `SOURCE_DATE_EPOCH`
/// (seconds since 1970, the reproducible-builds.org convention) so two runs of one case can give identical
/// files.
pub fn created_utc() -> String {
    let seconds = std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|s| s.trim().parse::<i64>().ok())
        .unwrap_or_else(|| match SystemTime::now().duration_since(UNIX_EPOCH) {
            Ok(d) => d.as_secs() as i64,
            Err(e) => -(e.duration().as_secs() as i64),
        });
    iso8601_utc(seconds)
}

/// ISO 8601 UTC text of `seconds` since 1970-01-01T00:00:00Z (proleptic Gregorian, no leap seconds).
pub fn iso8601_utc(seconds: i64) -> String {
    let days = seconds.div_euclid(86_400);
    let secs_of_day = seconds.rem_euclid(86_400);
    let (year, month, day) = civil_from_days(days);
    format!(
        "{year:04}-{month:02}-{day:02}T{:02}:{:02}:{:02}Z",
        secs_of_day / 3600,
        (secs_of_day / 60) % 60,
        secs_of_day % 60
    )
}

/// Calendar date of a day count since 1970-01-01, after H. Hinnant, "chrono-Compatible Low-Level Date
/// Algorithms" (2013), `civil_from_days` (eras of 400 years, March-based years).
fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097); // day of era, [0, 146096]
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365; // year of era, [0, 399]
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100); // day of March-based year, [0, 365]
    let mp = (5 * doy + 2) / 153; // March-based month, [0, 11]
    let day = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let month = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    let year = yoe + era * 400 + i64::from(month <= 2);
    (year, month, day)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn known_dates() {
        assert_eq!(iso8601_utc(0), "1970-01-01T00:00:00Z");
        // 2000-02-29 (a leap day of a century leap year) at 12:00:00 is 951825600 s (computed by hand:
        // 30 years * 365 + 7 leap days = 10957 days to 2000-01-01, + 59 days).
        assert_eq!(iso8601_utc((10_957 + 59) * 86_400 + 43_200), "2000-02-29T12:00:00Z");
        assert_eq!(iso8601_utc(-1), "1969-12-31T23:59:59Z");
        // 2100 is not a leap year: 2100-02-28 is followed by 2100-03-01.
        let feb28_2100 = (0..130).map(|y| if is_leap(1970 + y) { 366 } else { 365 }).sum::<i64>() + 58;
        assert_eq!(iso8601_utc(feb28_2100 * 86_400), "2100-02-28T00:00:00Z");
        assert_eq!(iso8601_utc((feb28_2100 + 1) * 86_400), "2100-03-01T00:00:00Z");
    }

    fn is_leap(y: i64) -> bool {
        (y % 4 == 0 && y % 100 != 0) || y % 400 == 0
    }

    #[test]
    fn revision_of_non_repository_is_none() {
        let dir = tempfile::tempdir().unwrap();
        assert_eq!(git_revision_of(dir.path()), None);
        assert_eq!(git_revision_of(&dir.path().join("missing")), None);
    }

    #[test]
    fn revision_of_fresh_repository_is_head() {
        let dir = tempfile::tempdir().unwrap();
        let git = |args: &[&str]| {
            Command::new("git")
                .arg("-C")
                .arg(dir.path())
                .args(["-c", "user.name=t", "-c", "user.email=t@t", "-c", "commit.gpgsign=false"])
                .args(args)
                .output()
        };
        match git(&["init", "-q"]) {
            Ok(o) if o.status.success() => {}
            _ => {
                eprintln!("skipping: git is not available");
                return;
            }
        }
        std::fs::write(dir.path().join("a.txt"), "1").unwrap();
        assert!(git(&["add", "a.txt"]).unwrap().status.success());
        assert!(git(&["commit", "-q", "-m", "one"]).unwrap().status.success());
        let head = String::from_utf8(git(&["rev-parse", "HEAD"]).unwrap().stdout).unwrap().trim().to_string();
        assert_eq!(git_revision_of(dir.path()), Some(head.clone()));
        std::fs::write(dir.path().join("a.txt"), "2").unwrap();
        assert_eq!(git_revision_of(dir.path()), Some(format!("{head}-dirty")));
    }
}
