//! Points to evaluate, as the user gives them to the `field` command: typed
//! as `X,Y,Z` on the command line, or listed in a CSV file.
//!
//! Input side of the field stage: turns text into [`PointRequest`]s in SI
//! units; whether a point can be evaluated is checked later against the line.
//!
//! A point file has a header naming the columns `x`, `y`, `z` (any order,
//! any case, metres when a cell has no unit) and optionally `id`; other
//! columns are ignored, and none of these four may appear twice. It is read
//! with the `csv` crate (RFC 4180 quoting: `"B, 2"` is one cell) in chunks,
//! so memory does not grow with the file's length. Every row has as many
//! cells as the header. Blank lines are skipped; a UTF-8 byte-order mark is
//! accepted; errors name the file, its line and the column.
//!
//! A row whose cells are not lengths, whose cell count differs from the
//! header's, or whose id is not one line of visible text is not fatal: it
//! comes back as a [`BadRow`] with its line, so that the caller can list
//! every bad row at once (or skip them). A missing or doubled header
//! column, text that is not UTF-8, or a row longer than [`MAX_ROW_BYTES`]
//! stops the reading. The file must be a regular file: it is read twice
//! (every row checked, then computed), which a pipe or a device cannot give.

use crate::report::PointRequest;
use crate::units::{Dim, parse_quantity_or};
use anyhow::{Context, Result, anyhow, bail};
use std::collections::VecDeque;
use std::fs::File;
use std::io::Read;
use std::path::Path;

/// The coordinate names, in order.
const AXES: [&str; 3] = ["x", "y", "z"];

/// Longest row of a point file, line ends not counted [bytes]. A row holds
/// three coordinates and an id, a few dozen bytes; the limit keeps memory
/// bounded on a file that is not a point list (one without line ends, such
/// as a binary file), whose "row" would otherwise be read whole.
pub const MAX_ROW_BYTES: u64 = 64 * 1024;

/// Longest id of a point [characters] (as the line description's ids).
pub const MAX_ID_CHARS: usize = 64;

/// A length such as `1.2`, `1.2 m` or `25 mm`; a bare number is in metres.
fn coordinate(text: &str) -> std::result::Result<f64, String> {
    parse_quantity_or(text, Dim::Length, 1.0).map_err(|e| e.to_string())
}

/// Parses `X,Y,Z` (each a length; bare numbers in metres).
pub fn parse_point(text: &str) -> std::result::Result<[f64; 3], String> {
    let parts: Vec<&str> = text.split(',').collect();
    if parts.len() != 3 {
        return Err(format!(
            "expected three coordinates X,Y,Z such as \"1.2,0,0.025\" or \"1.2 m,0,25 mm\", got \"{text}\""
        ));
    }
    let mut p = [0.0; 3];
    for (i, part) in parts.iter().enumerate() {
        p[i] = coordinate(part).map_err(|e| format!("{} coordinate: {e}", AXES[i]))?;
    }
    Ok(p)
}

/// Why an id cannot be shown as typed, if it cannot: longer than
/// [`MAX_ID_CHARS`], or holding a control character (a line end, a tab, a
/// terminal escape) or an invisible or direction-changing one (the
/// characters [`crate::safe_text::classify`] refuses in a one-line text).
pub fn id_problem(id: &str) -> Option<String> {
    let n = id.chars().count();
    if n > MAX_ID_CHARS {
        return Some(format!(
            "the id has {n} characters: expected up to {MAX_ID_CHARS}"
        ));
    }
    let (_, c, why) = crate::safe_text::first_bad(id, true)?;
    let what = match why {
        crate::safe_text::BadChar::Control | crate::safe_text::BadChar::LineBreak => {
            "a control character"
        }
        _ => "an invisible or direction-changing character",
    };
    Some(format!(
        "the id holds {what} (U+{:04X}): expected one line of visible text",
        c as u32
    ))
}

/// Longest part of a header echoed in a message [characters].
const ECHO_CHARS: usize = 60;

/// `text` quoted for a message: shortened to [`ECHO_CHARS`], control
/// characters escaped.
fn quoted(text: &str) -> String {
    if text.chars().count() <= ECHO_CHARS {
        format!("{text:?}")
    } else {
        let short: String = text.chars().take(ECHO_CHARS).collect();
        format!("{:?}", format!("{short}…"))
    }
}

/// Reads the points of a CSV file chunk by chunk: header with x, y, z
/// (metres) and optional id.
pub struct PointFile<R> {
    reader: csv::Reader<Lines<R>>,
    /// Column index of x, y and z.
    columns: [usize; 3],
    /// Column index of the id, if there is one.
    id_col: Option<usize>,
    /// The header's cells, quoted for messages (a row with another count).
    header: String,
    /// The record read last (reused, so reading allocates nothing per row).
    record: csv::StringRecord,
    /// The file's name in messages.
    name: String,
}

impl PointFile<File> {
    /// Opens the file at `path` and reads its header. Only a regular file is
    /// accepted: the point file is read twice.
    pub fn open(path: &Path) -> Result<Self> {
        let name = path.display().to_string();
        let f = File::open(path).with_context(|| format!("opening point file '{name}'"))?;
        let meta = f
            .metadata()
            .with_context(|| format!("opening point file '{name}'"))?;
        if !meta.is_file() {
            bail!(
                "point file '{name}' is not a regular file: it is read twice (every row checked, then computed), which a pipe or a device cannot give; save the points to a file"
            );
        }
        PointFile::from_reader(&name, f)
    }
}

/// What [`PointFile::read`] found.
enum Row {
    /// A record with as many cells as the header, at its line.
    Record(u64),
    /// A record with `got` cells where the header has `expected`, at its line.
    Cells { line: u64, expected: u64, got: u64 },
}

impl<R: Read> PointFile<R> {
    /// Reads the header from `input`; `name` names the file in messages.
    pub fn from_reader(name: &str, input: R) -> Result<Self> {
        let reader = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(false)
            .trim(csv::Trim::All)
            // Records end at LF only; the CR of a CRLF is trimmed as space.
            .terminator(csv::Terminator::Any(b'\n'))
            .from_reader(Lines::new(input));
        let mut file = PointFile {
            reader,
            columns: [0, 1, 2],
            id_col: None,
            header: String::new(),
            record: csv::StringRecord::new(),
            name: name.to_string(),
        };
        let line = match file.read()? {
            Some(Row::Record(line)) => line,
            Some(Row::Cells { line, .. }) => line,
            None => 1,
        };
        let cols: Vec<String> = file
            .record
            .iter()
            .map(|c| c.trim_start_matches('\u{feff}').trim().to_ascii_lowercase())
            .collect();
        file.header = quoted(&file.record.iter().collect::<Vec<_>>().join(","));
        let find = |n: &str| cols.iter().position(|c| c == n);
        let (Some(x), Some(y), Some(z)) = (find("x"), find("y"), find("z")) else {
            bail!(
                "{name}:{line}: expected a header with columns x,y,z (metres) and optionally id, got {}",
                file.header
            );
        };
        for n in ["x", "y", "z", "id"] {
            let at: Vec<usize> = (0..cols.len()).filter(|&i| cols[i] == n).collect();
            if let [a, b, ..] = at[..] {
                bail!(
                    "{name}:{line}: columns {} and {} of the header are both named \"{n}\": keep one (expected the columns x,y,z and optionally id, each once)",
                    a + 1,
                    b + 1
                );
            }
        }
        file.columns = [x, y, z];
        file.id_col = find("id");
        Ok(file)
    }

    /// Reads the next record, or `None` at the end of the file.
    fn read(&mut self) -> Result<Option<Row>> {
        let result = self.reader.read_record(&mut self.record);
        let from = self.record.position().map_or(0, |p| p.byte());
        let end = self.reader.position().byte();
        let lines = self.reader.get_mut();
        let row = match result {
            Ok(false) => return Ok(None),
            Ok(true) => Row::Record(lines.line_from(from)),
            Err(e) => match e.kind() {
                csv::ErrorKind::UnequalLengths {
                    expected_len, len, ..
                } => Row::Cells {
                    line: lines.line_from(from),
                    expected: *expected_len,
                    got: *len,
                },
                csv::ErrorKind::Utf8 { pos, .. } => {
                    let from = pos.as_ref().map_or(0, |p| p.byte());
                    bail!(
                        "{}:{}: expected UTF-8 text: save the point file as UTF-8 CSV",
                        self.name,
                        lines.line_from(from)
                    )
                }
                csv::ErrorKind::Io(io) if io.get_ref().is_some_and(|x| x.is::<RowTooLong>()) => {
                    let start = lines.row_start;
                    return Err(self.too_long(start));
                }
                _ => {
                    return Err(anyhow::Error::new(e)
                        .context(format!("reading point file '{}'", self.name)));
                }
            },
        };
        // A row that ended within the CSV reader's buffer is measured here.
        if lines.non_newline_bytes(from, end) > MAX_ROW_BYTES {
            return Err(self.too_long(from));
        }
        self.reader.get_mut().row_start = end;
        Ok(Some(row))
    }

    /// The error of a row from byte `from` on longer than [`MAX_ROW_BYTES`].
    fn too_long(&mut self, from: u64) -> anyhow::Error {
        let line = self.reader.get_mut().line_from(from);
        anyhow!(
            "{}:{line}: a row holds more than {}: a point file's rows hold three coordinates and an id (is this a CSV file of points?)",
            self.name,
            crate::read::size_text(MAX_ROW_BYTES)
        )
    }

    /// Up to `n` more rows, good or bad; an empty chunk at the end of the file.
    pub fn next_chunk(&mut self, n: usize) -> Result<Chunk> {
        let mut out = Chunk::default();
        while out.points.len() + out.bad.len() < n {
            let Some(row) = self.read()? else {
                break;
            };
            // A line of spaces reads as one empty cell.
            if self.record.len() == 1 && self.record[0].is_empty() {
                continue;
            }
            let line = match row {
                Row::Record(line) => line,
                Row::Cells {
                    line,
                    expected,
                    got,
                } => {
                    out.bad.push(BadRow {
                        line,
                        message: format!(
                            "expected {expected} cells as in the header ({}), got {got}: quote a cell that holds a comma, e.g. \"B, 2\"",
                            self.header
                        ),
                    });
                    continue;
                }
            };
            let mut at = [0.0; 3];
            let mut problems = Vec::new();
            for (k, &c) in self.columns.iter().enumerate() {
                match coordinate(self.record.get(c).unwrap_or("")) {
                    Ok(x) => at[k] = x,
                    Err(e) => problems.push(format!("column {}: {e}", AXES[k])),
                }
            }
            let id = self
                .id_col
                .and_then(|c| self.record.get(c))
                .filter(|s| !s.is_empty());
            if let Some(e) = id.and_then(id_problem) {
                problems.push(format!("column id: {e}"));
            }
            if !problems.is_empty() {
                out.bad.push(BadRow {
                    line,
                    message: problems.join("; "),
                });
                continue;
            }
            out.points.push(PointRequest {
                id: id.map(str::to_string),
                at,
            });
            out.lines.push(line);
        }
        Ok(out)
    }
    /// Reads the rest of the file in chunks of up to `n` rows, calling `f`
    /// with each chunk; returns the number of rows read (good and bad).
    pub fn for_each_chunk(
        mut self,
        n: usize,
        mut f: impl FnMut(&Chunk) -> Result<()>,
    ) -> Result<usize> {
        let mut count = 0;
        loop {
            let chunk = self.next_chunk(n)?;
            if chunk.is_empty() {
                return Ok(count);
            }
            f(&chunk)?;
            count += chunk.points.len() + chunk.bad.len();
        }
    }

    /// The file's name in messages.
    pub fn name(&self) -> &str {
        &self.name
    }
}

/// A row of a point file that cannot be evaluated.
#[derive(Debug, Clone, PartialEq)]
pub struct BadRow {
    /// Its line in the file (from 1).
    pub line: u64,
    /// What is wrong and what would be accepted.
    pub message: String,
}

/// Rows read from a point file: the good points with their lines, and the
/// bad rows.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Chunk {
    /// Points whose cells are lengths.
    pub points: Vec<PointRequest>,
    /// The line of each point in `points` (from 1).
    pub lines: Vec<u64>,
    /// Rows whose cells are not lengths.
    pub bad: Vec<BadRow>,
}

impl Chunk {
    /// No rows at all.
    pub fn is_empty(&self) -> bool {
        self.points.is_empty() && self.bad.is_empty()
    }
}

/// The bad rows of a point file, collected up to [`BadRows::LISTED`] with
/// the count of the rest, so that memory stays bounded on any file.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct BadRows {
    /// The first bad rows, in file order.
    pub listed: Vec<BadRow>,
    /// How many bad rows there are in all.
    pub total: usize,
}

impl BadRows {
    /// At most this many bad rows are kept to be listed.
    pub const LISTED: usize = 1000;

    /// Records one bad row.
    pub fn push(&mut self, row: BadRow) {
        if self.listed.len() < Self::LISTED {
            self.listed.push(row);
        }
        self.total += 1;
    }

    /// One line per bad row, `FILE:LINE: what`, each ending with a newline,
    /// and a last line saying how many more there are when not all are listed.
    pub fn lines(&self, file: &str) -> String {
        let mut s = String::new();
        for r in &self.listed {
            s.push_str(&format!("  {file}:{}: {}\n", r.line, r.message));
        }
        if self.total > self.listed.len() {
            s.push_str(&format!(
                "  … and {} more bad row(s), not listed\n",
                self.total - self.listed.len()
            ));
        }
        s
    }
}

/// The input as the CSV reader takes it, with the runs of newlines it has
/// passed on, so that a record's line can be told even after the empty
/// lines the reader skips, and with the length of the row in progress
/// bounded by [`MAX_ROW_BYTES`]. Runs before the record read last are
/// forgotten: memory stays within the rows' limit and the reader's buffer
/// (runs are separated by other bytes, so a file of empty lines is one run).
struct Lines<R> {
    inner: R,
    /// Bytes passed on so far.
    offset: u64,
    /// Newlines passed on so far.
    newlines: u64,
    /// The runs of consecutive newlines not yet forgotten, in order.
    runs: VecDeque<Run>,
    /// Where the row in progress starts: the end of the record read last
    /// [byte].
    row_start: u64,
}

/// Consecutive newlines: `count` of them from byte `start` on, with
/// `before` newlines earlier in the input.
#[derive(Debug, Clone, Copy)]
struct Run {
    start: u64,
    count: u64,
    before: u64,
}

/// The row in progress is longer than [`MAX_ROW_BYTES`] (carried through
/// the CSV reader as an I/O error).
#[derive(Debug)]
struct RowTooLong;

impl std::fmt::Display for RowTooLong {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "a row holds more than {MAX_ROW_BYTES} bytes")
    }
}

impl std::error::Error for RowTooLong {}

impl<R> Lines<R> {
    fn new(inner: R) -> Self {
        Lines {
            inner,
            offset: 0,
            newlines: 0,
            runs: VecDeque::new(),
            row_start: 0,
        }
    }

    /// Newlines before byte `at` (not before a forgotten run's end).
    fn newlines_before(&self, at: u64) -> u64 {
        let i = self.runs.partition_point(|r| r.start + r.count <= at);
        match self.runs.get(i) {
            Some(r) => r.before + at.saturating_sub(r.start),
            None => self.newlines,
        }
    }

    /// Bytes from `from` to `to` that are not newlines.
    fn non_newline_bytes(&self, from: u64, to: u64) -> u64 {
        (to - from) - (self.newlines_before(to) - self.newlines_before(from))
    }

    /// The line (from 1) of the record that the reader found from byte
    /// `from` on: past the empty lines it skipped there. Forgets the runs
    /// that end before `from`.
    fn line_from(&mut self, from: u64) -> u64 {
        while self.runs.front().is_some_and(|r| r.start + r.count <= from) {
            self.runs.pop_front();
        }
        let empty = match self.runs.front() {
            Some(r) if r.start <= from => r.start + r.count - from,
            _ => 0,
        };
        self.newlines_before(from) + empty + 1
    }
}

impl<R: Read> Read for Lines<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        // The CSV reader asks for more only once it has taken every byte
        // passed on: the row in progress holds all of them from `row_start`.
        if self.non_newline_bytes(self.row_start, self.offset) > MAX_ROW_BYTES {
            return Err(std::io::Error::other(RowTooLong));
        }
        let n = self.inner.read(buf)?;
        for (i, _) in buf[..n].iter().enumerate().filter(|(_, b)| **b == b'\n') {
            let at = self.offset + i as u64;
            match self.runs.back_mut() {
                Some(r) if r.start + r.count == at => r.count += 1,
                _ => self.runs.push_back(Run {
                    start: at,
                    count: 1,
                    before: self.newlines,
                }),
            }
            self.newlines += 1;
        }
        self.offset += n as u64;
        Ok(n)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn file(text: &str) -> Result<PointFile<&[u8]>> {
        PointFile::from_reader("pts.csv", text.as_bytes())
    }

    /// Every point of `text`, read in chunks of `n`, with the chunk sizes;
    /// the first bad row as an error `pts.csv:LINE: what`.
    fn read_all(text: &str, n: usize) -> Result<(Vec<PointRequest>, Vec<usize>)> {
        let (mut all, mut sizes, mut bad) = (Vec::new(), Vec::new(), BadRows::default());
        let count = file(text)?.for_each_chunk(n, |chunk| {
            assert_eq!(chunk.points.len(), chunk.lines.len());
            sizes.push(chunk.points.len() + chunk.bad.len());
            all.extend_from_slice(&chunk.points);
            for b in &chunk.bad {
                bad.push(b.clone());
            }
            Ok(())
        })?;
        assert_eq!(count, all.len() + bad.total);
        if let Some(b) = bad.listed.first() {
            bail!("pts.csv:{}: {}", b.line, b.message);
        }
        Ok((all, sizes))
    }

    fn err(text: &str) -> String {
        match read_all(text, 10) {
            Ok(p) => panic!("expected an error, read {p:?}"),
            Err(e) => format!("{e:#}"),
        }
    }

    /// Every bad row comes back with its line, the good rows with theirs,
    /// in one pass; several bad cells of a row are named together.
    #[test]
    fn every_bad_row_is_returned_with_its_line() {
        let text = "x,y,z\n1,0,1\n1,zero,1\n\n2,0,1\n1 kV,0,nope\n3,0,1\n";
        let mut f = file(text).unwrap();
        let chunk = f.next_chunk(100).unwrap();
        assert_eq!(chunk.lines, vec![2, 5, 7]);
        let xs: Vec<f64> = chunk.points.iter().map(|p| p.at[0]).collect();
        assert_eq!(xs, vec![1.0, 2.0, 3.0]);
        let lines: Vec<u64> = chunk.bad.iter().map(|b| b.line).collect();
        assert_eq!(lines, vec![3, 6]);
        assert!(
            chunk.bad[0].message.starts_with("column y: "),
            "{:?}",
            chunk.bad
        );
        assert!(
            chunk.bad[1].message.starts_with("column x: "),
            "{:?}",
            chunk.bad
        );
        assert!(
            chunk.bad[1].message.contains("; column z: "),
            "{:?}",
            chunk.bad
        );
        assert!(f.next_chunk(100).unwrap().is_empty());
    }

    /// The list keeps [`BadRows::LISTED`] rows, counts the rest and says so;
    /// every line ends with a newline.
    #[test]
    fn bad_rows_list_is_bounded_and_counted() {
        let mut b = BadRows::default();
        for line in 0..(BadRows::LISTED as u64 + 5) {
            b.push(BadRow {
                line,
                message: "column x: bad".into(),
            });
        }
        assert_eq!(b.total, BadRows::LISTED + 5);
        let text = b.lines("pts.csv");
        assert_eq!(text.lines().count(), BadRows::LISTED + 1);
        assert!(
            text.ends_with("… and 5 more bad row(s), not listed\n"),
            "{text}"
        );
        assert!(text.split_inclusive('\n').all(|l| l.ends_with('\n')));
        assert!(text.starts_with("  pts.csv:0: column x: bad\n"));
    }

    #[test]
    fn reads_columns_in_any_order_with_units_and_ids() {
        let (p, _) = read_all(
            "Z, id ,x,y,extra\n25 mm,A,1.2 m,0,foo\n1,\"B, 2\",-3,0.5,\n",
            10,
        )
        .unwrap();
        assert_eq!(
            p,
            vec![
                PointRequest {
                    id: Some("A".into()),
                    at: [1.2, 0.0, 0.025],
                },
                PointRequest {
                    id: Some("B, 2".into()),
                    at: [-3.0, 0.5, 1.0],
                },
            ]
        );
    }

    #[test]
    fn streams_in_chunks_of_the_size_asked() {
        let mut text = String::from("x,y,z\n");
        for i in 0..25 {
            text.push_str(&format!("{i},0,1\n"));
        }
        let (p, sizes) = read_all(&text, 10).unwrap();
        assert_eq!(sizes, vec![10, 10, 5]);
        assert_eq!(p.len(), 25);
        assert_eq!(p[24].at, [24.0, 0.0, 1.0]);
        assert!(p.iter().all(|q| q.id.is_none()));
    }

    #[test]
    fn memory_does_not_grow_with_the_file() {
        let text = format!("x,y,z\n{}", "1,0,1\n\n".repeat(200_000));
        let mut f = file(&text).unwrap();
        let mut count = 0;
        loop {
            let chunk = f.next_chunk(1000).unwrap();
            if chunk.is_empty() {
                break;
            }
            count += chunk.points.len();
            // Only the runs of newlines in the reader's buffer are kept.
            assert!(f.reader.get_ref().runs.len() < 20_000);
        }
        assert_eq!(count, 200_000);
        // Every newline was counted.
        assert_eq!(f.reader.get_ref().newlines, 400_001);
    }

    #[test]
    fn accepts_a_byte_order_mark_and_blank_lines() {
        let (p, _) = read_all("\u{feff}x,y,z\n\n1,0,1\n   \r\n2,0,1\r\n\n", 10).unwrap();
        let xs: Vec<f64> = p.iter().map(|q| q.at[0]).collect();
        assert_eq!(xs, vec![1.0, 2.0]);
    }

    #[test]
    fn a_missing_column_is_refused_with_the_header() {
        let e = err("x,y\n1,2\n");
        assert_eq!(
            e,
            "pts.csv:1: expected a header with columns x,y,z (metres) and optionally id, got \"x,y\""
        );
        assert!(err("").contains("pts.csv:1: expected a header"));
    }

    #[test]
    fn a_bad_cell_names_its_line_and_column() {
        // Line 4: the blank line 3 counts.
        let e = err("x,y,z\n1,0,1\n\n1,zero,1.3\n");
        assert!(e.starts_with("pts.csv:4: column y: "), "{e}");
        assert!(e.contains("\"zero\""), "{e}");
        // The same with CRLF line ends, several blank lines (one of spaces)
        // and no newline at the end.
        let e = err("x,y,z\r\n1,0,1\r\n\r\n   \r\n\r\n1,0,zero");
        assert!(e.starts_with("pts.csv:6: column z: "), "{e}");
        // A quoted note over two lines: the next record's line is counted.
        let e = err("\n\nid,x,y,z,note\na,1,0,1,\"a\nb\"\nc,1,0,zero,\n");
        assert!(e.starts_with("pts.csv:6: column z: "), "{e}");
        let e = err("x,y,z\n1,0,\n");
        assert!(e.starts_with("pts.csv:2: column z: "), "{e}");
        assert!(e.contains("empty"), "{e}");
        let e = err("x,y,z\n1,0,2 kV\n");
        assert!(
            e.starts_with("pts.csv:2: column z: expected a length"),
            "{e}"
        );
    }

    #[test]
    fn text_that_is_not_utf8_is_refused_with_its_line() {
        let mut f = PointFile::from_reader("pts.csv", &b"x,y,z\n1,0,1\n1,\xff,1\n"[..]).unwrap();
        let e = format!("{:#}", f.next_chunk(10).unwrap_err());
        assert!(e.starts_with("pts.csv:3: expected UTF-8"), "{e}");
    }

    /// A row with more or fewer cells than the header is a bad row (an
    /// unquoted comma would shift every cell after it); the rows after it
    /// are read.
    #[test]
    fn a_row_with_another_cell_count_is_a_bad_row() {
        let mut f = file("id,x,y,z\nB, 2,1,0,1\n\"B, 2\",1,0,1\nC,1,0\nD,2,0,1\n").unwrap();
        let chunk = f.next_chunk(10).unwrap();
        let ids: Vec<_> = chunk.points.iter().map(|p| p.id.clone().unwrap()).collect();
        assert_eq!(ids, ["B, 2", "D"]);
        assert_eq!(chunk.lines, vec![3, 5]);
        assert_eq!(
            chunk.bad,
            vec![
                BadRow {
                    line: 2,
                    message: "expected 4 cells as in the header (\"id,x,y,z\"), got 5: quote a cell that holds a comma, e.g. \"B, 2\"".into()
                },
                BadRow {
                    line: 4,
                    message: "expected 4 cells as in the header (\"id,x,y,z\"), got 3: quote a cell that holds a comma, e.g. \"B, 2\"".into()
                },
            ]
        );
    }

    #[test]
    fn a_doubled_column_is_refused_naming_both() {
        let e = err("x,y,z,X\n1,0,1,2\n");
        assert_eq!(
            e,
            "pts.csv:1: columns 1 and 4 of the header are both named \"x\": keep one (expected the columns x,y,z and optionally id, each once)"
        );
        let e = err("\nid,x,y,z,ID\n");
        assert!(
            e.starts_with("pts.csv:2: columns 1 and 5 of the header are both named \"id\""),
            "{e}"
        );
        // Other columns are ignored, twice or not.
        assert_eq!(read_all("x,y,z,n,n\n1,0,1,a,b\n", 10).unwrap().0.len(), 1);
    }

    #[test]
    fn an_id_must_be_one_line_of_visible_text() {
        let text = format!(
            "id,x,y,z\n\"a\nb\",1,0,1\n\"ok\u{202e}gpj\",1,0,1\n{},1,0,1\n{},1,0,1\nA b-1,1,0,1\n",
            "i".repeat(MAX_ID_CHARS + 1),
            "i".repeat(MAX_ID_CHARS)
        );
        let chunk = file(&text).unwrap().next_chunk(10).unwrap();
        let ids: Vec<_> = chunk.points.iter().map(|p| p.id.clone().unwrap()).collect();
        assert_eq!(ids, ["i".repeat(MAX_ID_CHARS), "A b-1".into()]);
        let bad: Vec<_> = chunk
            .bad
            .iter()
            .map(|b| (b.line, b.message.as_str()))
            .collect();
        assert_eq!(
            bad,
            [
                (
                    2,
                    "column id: the id holds a control character (U+000A): expected one line of visible text"
                ),
                (
                    4,
                    "column id: the id holds an invisible or direction-changing character (U+202E): expected one line of visible text"
                ),
                (5, "column id: the id has 65 characters: expected up to 64"),
            ]
        );
        assert_eq!(
            id_problem("a\u{1b}[31m"),
            Some(
                "the id holds a control character (U+001B): expected one line of visible text"
                    .into()
            )
        );
        assert!(id_problem("a\u{200b}b").is_some());
        assert_eq!(id_problem("Zone 1 / Messpunkt ä"), None);
    }

    /// A row of exactly [`MAX_ROW_BYTES`] (line ends not counted) is read,
    /// one byte more is refused at its line, whether the row ends within the
    /// reader's buffer or not, and whether it spans several lines or one.
    #[test]
    fn rows_are_bounded_in_length() {
        let max = MAX_ROW_BYTES as usize;
        let row = |len: usize| format!("1,0,1,{}", "n".repeat(len - "1,0,1,".len()));
        let ok = format!("x,y,z,note\n{}\n2,0,1,\n", row(max));
        assert_eq!(read_all(&ok, 10).unwrap().0.len(), 2);
        let long = format!("x,y,z,note\n\n{}\n2,0,1,\n", row(max + 1));
        assert_eq!(
            err(&long),
            "pts.csv:3: a row holds more than 64 KiB: a point file's rows hold three coordinates and an id (is this a CSV file of points?)"
        );
        let longer = format!("x,y,z,note\n{}\n", row(3 * max));
        assert!(err(&longer).starts_with("pts.csv:2: a row holds more than 64 KiB"));
        // A quoted cell over many short lines, never closed.
        let open = format!("x,y,z,note\n1,0,1,\"{}", "abc\n".repeat(max));
        assert!(err(&open).starts_with("pts.csv:2: a row holds more than 64 KiB"));
        // Empty lines are not a row: a million of them pass, as one run.
        let blank = format!("{}x,y,z\n1,0,1\n", "\n".repeat(1_000_000));
        let mut f = file(&blank).unwrap();
        assert!(f.reader.get_ref().runs.len() <= 3);
        assert_eq!(f.next_chunk(10).unwrap().lines, vec![1_000_002]);
    }

    /// An endless input without line ends (as `/dev/zero`) stops at the
    /// limit with a message, in bounded memory.
    #[test]
    fn an_endless_input_stops_at_the_row_limit() {
        let e = PointFile::from_reader("zero", std::io::repeat(0))
            .err()
            .unwrap();
        assert_eq!(
            format!("{e:#}"),
            "zero:1: a row holds more than 64 KiB: a point file's rows hold three coordinates and an id (is this a CSV file of points?)"
        );
    }

    #[test]
    fn a_device_or_pipe_is_refused() {
        let e = PointFile::open(Path::new("/dev/null")).err().unwrap();
        assert!(
            format!("{e:#}")
                .starts_with("point file '/dev/null' is not a regular file: it is read twice"),
            "{e:#}"
        );
    }

    #[test]
    fn parse_point_takes_three_lengths() {
        assert_eq!(parse_point("1.2 m,0,25 mm").unwrap(), [1.2, 0.0, 0.025]);
        assert!(
            parse_point("1,0")
                .unwrap_err()
                .contains("expected three coordinates")
        );
        assert!(
            parse_point("1,0,2 kV")
                .unwrap_err()
                .starts_with("z coordinate: expected a length")
        );
    }
}
