//! Points to evaluate, as the user gives them to the `field` command: typed
//! as `X,Y,Z` on the command line, or listed in a CSV file.
//!
//! Input side of the field stage: turns text into [`PointRequest`]s in SI
//! units; whether a point can be evaluated is checked later against the line.
//!
//! A point file has a header naming the columns `x`, `y`, `z` (any order,
//! any case, metres when a cell has no unit) and optionally `id`; other
//! columns are ignored. It is read with the `csv` crate in chunks, so memory
//! does not grow with the file's length. Blank lines are skipped; a UTF-8
//! byte-order mark is accepted; errors name the file, its line and the
//! column. A row whose cells are not lengths is not fatal: it comes back as
//! a [`BadRow`] with its line, so that the caller can list every bad row at
//! once (or skip them); a missing header or text that is not UTF-8 stops the
//! reading.

use crate::report::PointRequest;
use crate::units::{Dim, parse_quantity_or};
use anyhow::{Context, Result, anyhow, bail};
use std::collections::VecDeque;
use std::fs::File;
use std::io::Read;
use std::path::Path;

/// The coordinate names, in order.
const AXES: [&str; 3] = ["x", "y", "z"];

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

/// Reads the points of a CSV file chunk by chunk: header with x, y, z
/// (metres) and optional id.
pub struct PointFile<R> {
    reader: csv::Reader<Lines<R>>,
    /// Column index of x, y and z.
    columns: [usize; 3],
    /// Column index of the id, if there is one.
    id_col: Option<usize>,
    /// The record read last (reused, so reading allocates nothing per row).
    record: csv::StringRecord,
    /// The file's name in messages.
    name: String,
}

impl PointFile<File> {
    /// Opens the file at `path` and reads its header.
    pub fn open(path: &Path) -> Result<Self> {
        let f =
            File::open(path).with_context(|| format!("opening point file '{}'", path.display()))?;
        PointFile::from_reader(&path.display().to_string(), f)
    }
}

impl<R: Read> PointFile<R> {
    /// Reads the header from `input`; `name` names the file in messages.
    pub fn from_reader(name: &str, input: R) -> Result<Self> {
        let reader = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .trim(csv::Trim::All)
            // Records end at LF only; the CR of a CRLF is trimmed as space.
            .terminator(csv::Terminator::Any(b'\n'))
            .from_reader(Lines::new(input));
        let mut file = PointFile {
            reader,
            columns: [0, 1, 2],
            id_col: None,
            record: csv::StringRecord::new(),
            name: name.to_string(),
        };
        let line = file.read()?.unwrap_or(1);
        let cols: Vec<String> = file
            .record
            .iter()
            .map(|c| {
                c.trim_start_matches('\u{feff}')
                    .trim()
                    .trim_matches('"')
                    .to_ascii_lowercase()
            })
            .collect();
        let find = |n: &str| cols.iter().position(|c| c == n);
        let (Some(x), Some(y), Some(z)) = (find("x"), find("y"), find("z")) else {
            bail!(
                "{name}:{line}: expected a header with columns x,y,z (metres) and optionally id, got \"{}\"",
                file.record.iter().collect::<Vec<_>>().join(",")
            );
        };
        file.columns = [x, y, z];
        file.id_col = find("id");
        Ok(file)
    }

    /// Reads the next record; its line, or `None` at the end of the file.
    fn read(&mut self) -> Result<Option<u64>> {
        match self.reader.read_record(&mut self.record) {
            Ok(false) => Ok(None),
            Ok(true) => {
                let from = self.record.position().map_or(0, |p| p.byte());
                Ok(Some(self.reader.get_mut().line_from(from)))
            }
            Err(e) => Err(match e.kind() {
                csv::ErrorKind::Utf8 { pos, .. } => {
                    let from = pos.as_ref().map_or(0, |p| p.byte());
                    anyhow!(
                        "{}:{}: expected UTF-8 text: save the point file as UTF-8 CSV",
                        self.name,
                        self.reader.get_mut().line_from(from)
                    )
                }
                _ => anyhow::Error::new(e).context(format!("reading point file '{}'", self.name)),
            }),
        }
    }

    /// Up to `n` more rows, good or bad; an empty chunk at the end of the file.
    pub fn next_chunk(&mut self, n: usize) -> Result<Chunk> {
        let mut out = Chunk::default();
        while out.points.len() + out.bad.len() < n {
            let Some(line) = self.read()? else {
                break;
            };
            // A line of spaces reads as one empty cell.
            if self.record.len() == 1 && self.record[0].is_empty() {
                continue;
            }
            let mut at = [0.0; 3];
            let mut problems = Vec::new();
            for (k, &c) in self.columns.iter().enumerate() {
                match coordinate(self.record.get(c).unwrap_or("")) {
                    Ok(x) => at[k] = x,
                    Err(e) => problems.push(format!("column {}: {e}", AXES[k])),
                }
            }
            if !problems.is_empty() {
                out.bad.push(BadRow {
                    line,
                    message: problems.join("; "),
                });
                continue;
            }
            let id = self
                .id_col
                .and_then(|c| self.record.get(c))
                .map(|s| s.trim_matches('"').to_string())
                .filter(|s| !s.is_empty());
            out.points.push(PointRequest { id, at });
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

/// The input as the CSV reader takes it, with the byte offsets of the
/// newlines it has passed on, so that a record's line can be told even after
/// the empty lines the reader skips. Offsets before the record read last
/// are forgotten: memory stays within the reader's buffer.
struct Lines<R> {
    inner: R,
    /// Bytes passed on so far.
    offset: u64,
    /// Offsets of the newlines not yet forgotten, in order.
    newlines: VecDeque<u64>,
    /// Newlines forgotten.
    before: u64,
}

impl<R> Lines<R> {
    fn new(inner: R) -> Self {
        Lines {
            inner,
            offset: 0,
            newlines: VecDeque::new(),
            before: 0,
        }
    }

    /// The line (from 1) of the record that the reader found from byte
    /// `from` on: past the empty lines it skipped there. Forgets the
    /// newlines before `from`.
    fn line_from(&mut self, from: u64) -> u64 {
        while self.newlines.front().is_some_and(|&nl| nl < from) {
            self.newlines.pop_front();
            self.before += 1;
        }
        let empty = self
            .newlines
            .iter()
            .zip(from..)
            .take_while(|(nl, b)| **nl == *b)
            .count() as u64;
        self.before + empty + 1
    }
}

impl<R: Read> Read for Lines<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        for (i, _) in buf[..n].iter().enumerate().filter(|(_, b)| **b == b'\n') {
            self.newlines.push_back(self.offset + i as u64);
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
            // Only the newlines in the reader's buffer are kept.
            assert!(f.reader.get_ref().newlines.len() < 20_000);
        }
        assert_eq!(count, 200_000);
        // Every newline was counted: forgotten or still kept.
        let lines = f.reader.get_ref();
        assert_eq!(lines.before + lines.newlines.len() as u64, 400_001);
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
        // A quoted id over two lines: the next record's line is counted.
        let e = err("\n\nid,x,y,z\n\"a\nb\",1,0,1\nc,1,0,zero\n");
        assert!(e.starts_with("pts.csv:6: column z: "), "{e}");
        let e = err("x,y,z\n1,0\n");
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
