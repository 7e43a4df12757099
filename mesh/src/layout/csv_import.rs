//! Read a layout from a CSV file with a header row: columns `x,y,z` (m) and optionally `radius` (m) and
//! `secretion_rate` (molecules/s), in any order; an empty radius or secretion field takes the default.
//! Lines starting with `#` are comments. The per-cell output columns of a previous run's `cells.csv` are
//! accepted and ignored, so such a file can seed a new case; any other column is an error (most likely a typo).
//! Only regular files are read (a pipe or device could block or never end), and only up to a size limit
//! that the caller derives from how many cells the chamber can hold.

use std::io::Read;
use std::path::Path;

use super::error::LayoutError;
use super::validate::check_cell_values;
use super::{Cell, Layout};

/// Columns of `cells.csv` written by a run (DESIGN.md §6) that carry no layout information.
const IGNORED_COLUMNS: [&str; 13] = [
    "id",
    "mean_surface_concentration",
    "bound_rate",
    "anisotropy_x",
    "anisotropy_y",
    "anisotropy_z",
    "anisotropy_along_flow",
    "front_back_contrast",
    "direction_error",
    "drag_x",
    "drag_y",
    "drag_z",
    "local_speed",
];

/// Bytes allowed per cell row of a layout file: a `cells.csv` row of a run, 18 numbers of up to 25 characters,
/// is under 500 bytes; the rest is room for comments and spaces.
pub const BYTES_PER_CELL: u64 = 1024;

/// Largest layout file for at most `max_cells` cells: [`BYTES_PER_CELL`] per cell plus 64 KiB of header
/// and comments.
pub fn max_file_bytes(max_cells: u64) -> u64 {
    max_cells.saturating_mul(BYTES_PER_CELL).saturating_add(64 * 1024)
}

/// Read cells from `path`, a regular file of at most `max_bytes`; ids are the data-row order (0-based). The
/// caller checks the layout against its chamber with [`Layout::validate`].
pub fn read_csv(
    path: &Path,
    default_radius: f64,
    default_secretion_rate: f64,
    max_bytes: u64,
) -> Result<Layout, LayoutError> {
    let fail =
        |line: Option<u64>, message: String| LayoutError::Csv { path: path.to_path_buf(), line, message };
    let text = read_bounded(path, max_bytes).map_err(|message| fail(None, message))?;
    // Line numbers are counted from byte offsets: the reader's own line counter skips blank lines.
    let lines = std::cell::RefCell::new(LineCounter::new(&text));
    let line_of =
        |position: Option<&csv::Position>| position.map(|p| lines.borrow_mut().line_at(p.byte() as usize));
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(true)
        .trim(csv::Trim::All)
        .comment(Some(b'#'))
        .from_reader(text.as_bytes());

    let headers = reader.headers().map_err(|e| fail(line_of(e.position()), e.to_string()))?.clone();
    let header_line = line_of(headers.position());
    if headers.is_empty() || headers.iter().all(str::is_empty) {
        return Err(fail(
            header_line,
            "the header row is missing (expected columns x,y,z[,radius,secretion_rate])".into(),
        ));
    }
    let mut column: [Option<usize>; 5] = [None; 5];
    const NAMES: [&str; 5] = ["x", "y", "z", "radius", "secretion_rate"];
    for (n, name) in headers.iter().enumerate() {
        let key = name.to_ascii_lowercase();
        if let Some(slot) = NAMES.iter().position(|&known| known == key) {
            if column[slot].is_some() {
                return Err(fail(header_line, format!("column '{name}' appears twice")));
            }
            column[slot] = Some(n);
        } else if !IGNORED_COLUMNS.contains(&key.as_str()) {
            return Err(fail(
                header_line,
                format!("unknown column '{name}' (expected x, y, z and optionally radius, secretion_rate)"),
            ));
        }
    }
    for (slot, name) in NAMES.iter().enumerate().take(3) {
        if column[slot].is_none() {
            return Err(fail(header_line, format!("required column '{name}' is missing from the header")));
        }
    }

    let mut cells = Vec::new();
    for record in reader.records() {
        let record = record.map_err(|e| fail(line_of(e.position()), e.to_string()))?;
        let line = line_of(record.position());
        let mut values = [f64::NAN; 5];
        for slot in 0..5 {
            let Some(n) = column[slot] else { continue };
            let field = record.get(n).unwrap_or("");
            if field.is_empty() {
                if slot < 3 {
                    return Err(fail(line, format!("column '{}' is empty", NAMES[slot])));
                }
                continue;
            }
            values[slot] = field.parse::<f64>().map_err(|_| {
                fail(line, format!("column '{}' holds '{field}', which is not a number", NAMES[slot]))
            })?;
        }
        let radius = if values[3].is_nan() && column[3].is_none_or(|n| record.get(n).unwrap_or("").is_empty())
        {
            default_radius
        } else {
            values[3]
        };
        let secretion_rate =
            if values[4].is_nan() && column[4].is_none_or(|n| record.get(n).unwrap_or("").is_empty()) {
                default_secretion_rate
            } else {
                values[4]
            };
        let id = cells.len();
        let centre = [values[0], values[1], values[2]];
        check_cell_values(id, centre, radius, secretion_rate).map_err(|e| fail(line, e.to_string()))?;
        cells.push(Cell { id, centre, radius, secretion_rate });
    }
    Ok(Layout { cells })
}

/// The whole file as text, refusing anything but a regular file of at most `max_bytes`.
fn read_bounded(path: &Path, max_bytes: u64) -> Result<String, String> {
    let cannot = |e: std::io::Error| format!("cannot read the layout file: {e}");
    let is_file = |m: std::fs::Metadata| m.is_file();
    if !std::fs::metadata(path).map(is_file).map_err(cannot)? {
        return Err("is not a regular file (a layout is read from a file, not a pipe or device)".into());
    }
    let file = std::fs::File::open(path).map_err(cannot)?;
    // Checked again on the open file, in case the path was replaced in between.
    if !file.metadata().map(is_file).map_err(cannot)? {
        return Err("is not a regular file (a layout is read from a file, not a pipe or device)".into());
    }
    let mut bytes = Vec::new();
    file.take(max_bytes.saturating_add(1)).read_to_end(&mut bytes).map_err(cannot)?;
    if bytes.len() as u64 > max_bytes {
        return Err(format!(
            "the file is larger than {max_bytes} bytes, more than a layout of as many cells as the chamber \
             can hold needs"
        ));
    }
    String::from_utf8(bytes).map_err(|_| "the file is not UTF-8 text".to_string())
}

/// Line numbers of byte offsets, for offsets that mostly increase (records in file order): each call counts
/// only the newlines since the previous one, so a whole file costs one pass.
struct LineCounter<'a> {
    bytes: &'a [u8],
    /// Offset up to which newlines have been counted, and the 1-based line there.
    at: usize,
    line: u64,
}

impl<'a> LineCounter<'a> {
    fn new(text: &'a str) -> Self {
        LineCounter { bytes: text.as_bytes(), at: 0, line: 1 }
    }

    /// 1-based line of the first record byte at or after `offset` (skipping blank and `#` comment lines,
    /// which the reader reports as part of the following record).
    fn line_at(&mut self, offset: usize) -> u64 {
        let bytes = self.bytes;
        let mut at = offset.min(bytes.len());
        while at < bytes.len() {
            match bytes[at] {
                b'\n' | b'\r' => at += 1,
                b'#' => {
                    while at < bytes.len() && bytes[at] != b'\n' {
                        at += 1;
                    }
                }
                _ => break,
            }
        }
        if at < self.at {
            (self.at, self.line) = (0, 1);
        }
        self.line += bytes[self.at..at].iter().filter(|&&b| b == b'\n').count() as u64;
        self.at = at;
        self.line
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::path::PathBuf;

    /// A file in the system temp dir, removed on drop.
    struct TempCsv(PathBuf);

    impl TempCsv {
        fn new(name: &str, text: &str) -> Self {
            let path = std::env::temp_dir().join(format!("mesh-csv-{}-{name}.csv", std::process::id()));
            std::fs::write(&path, text).expect("temp dir is writable");
            TempCsv(path)
        }
    }

    impl Drop for TempCsv {
        fn drop(&mut self) {
            let _ = std::fs::remove_file(&self.0);
        }
    }

    #[test]
    fn any_column_order_defaults_and_comments() {
        let file = TempCsv::new(
            "order",
            "# cells of a test\nsecretion_rate, z, y, x, radius\n2.5, 3e-5, 2e-5, 1e-5, 7e-6\n, 6e-5, 5e-5, 4e-5,\n",
        );
        let layout = read_csv(&file.0, 8e-6, 0.1, 1 << 20).unwrap();
        assert_eq!(layout.cells.len(), 2);
        assert_eq!(
            layout.cells[0],
            Cell { id: 0, centre: [1e-5, 2e-5, 3e-5], radius: 7e-6, secretion_rate: 2.5 }
        );
        assert_eq!(
            layout.cells[1],
            Cell { id: 1, centre: [4e-5, 5e-5, 6e-5], radius: 8e-6, secretion_rate: 0.1 }
        );
    }

    #[test]
    fn errors_name_the_line() {
        let cases = [
            ("badnum", "x,y,z\n1e-5,2e-5,3e-5\n1e-5,abc,3e-5\n", Some(3), "not a number"),
            ("missing", "x,y,radius\n1e-5,2e-5,3e-5\n", Some(1), "'z' is missing"),
            ("unknown", "x,y,z,radus\n1e-5,2e-5,3e-5,1e-6\n", Some(1), "unknown column 'radus'"),
            (
                "negative",
                "x,y,z,radius\n1e-5,2e-5,3e-5,1e-6\n\n1e-5,2e-5,3e-5,-1e-6\n",
                Some(4),
                "must be positive",
            ),
            ("ragged", "x,y,z\n1e-5,2e-5,3e-5\n1e-5,2e-5\n", Some(3), "fields"),
            ("nan", "x,y,z\nNaN,2e-5,3e-5\n", Some(2), "non-finite"),
        ];
        for (name, text, line, needle) in cases {
            let file = TempCsv::new(name, text);
            match read_csv(&file.0, 8e-6, 1.0, 1 << 20) {
                Err(e @ LayoutError::Csv { .. }) => {
                    let LayoutError::Csv { line: got, ref message, .. } = e else { unreachable!() };
                    assert_eq!(got, line, "{name}: {message}");
                    assert!(message.contains(needle), "{name}: {message}");
                    let shown = e.to_string();
                    assert!(shown.contains(&format!("line {}", line.unwrap_or(0))), "{shown}");
                }
                other => panic!("{name}: expected a CSV error, got {other:?}"),
            }
        }
        let missing = read_csv(Path::new("/nonexistent/cells.csv"), 8e-6, 1.0, 1 << 20).unwrap_err();
        assert!(matches!(missing, LayoutError::Csv { line: None, .. }), "{missing}");
    }

    #[test]
    fn line_numbers_are_found_in_one_pass_and_limits_hold() {
        // 40 000 rows with a bad value in the last, after a comment and a blank line.
        let mut text = String::from("x,y,z\n");
        for n in 0..40_000 {
            text.push_str(&format!("{}e-6,1e-5,1e-5\n", n));
        }
        text.push_str("# a comment\n\n1e-5,oops,1e-5\n");
        let file = TempCsv::new("long", &text);
        match read_csv(&file.0, 1e-6, 1.0, 1 << 26) {
            Err(LayoutError::Csv { line, .. }) => assert_eq!(line, Some(40_004)),
            other => panic!("expected a CSV error, got {other:?}"),
        }
        let small = TempCsv::new("limit", "x,y,z\n1e-5,1e-5,1e-5\n");
        let message = read_csv(&small.0, 1e-6, 1.0, 10).unwrap_err().to_string();
        assert!(message.contains("larger than 10 bytes"), "{message}");
        let message = read_csv(Path::new("/dev/zero"), 1e-6, 1.0, 1 << 20).unwrap_err().to_string();
        assert!(message.contains("not a regular file"), "{message}");
        let message = read_csv(&std::env::temp_dir(), 1e-6, 1.0, 1 << 20).unwrap_err().to_string();
        assert!(message.contains("not a regular file"), "{message}");
    }
}
