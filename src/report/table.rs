//! Table layout shared by the markup writers: the layout is written once,
//! each writer supplies how a row, the divider and escaping look.

/// How one markup draws a table.
pub trait TableWriter {
    /// Escapes cell text for this markup.
    fn escape(&self, s: &str) -> String;
    /// One row; `header` for the title row.
    fn row(&self, cells: &[String], header: bool) -> String;
    /// What goes between the header and the body (may be empty).
    fn divider(&self, columns: usize) -> String;
    /// Text before and after the table.
    fn frame(&self) -> (&'static str, &'static str);

    /// The whole table.
    fn table(&self, header: &[String], rows: &[Vec<String>]) -> String {
        let (open, close) = self.frame();
        let esc = |cells: &[String]| cells.iter().map(|c| self.escape(c)).collect::<Vec<_>>();
        let mut s = String::from(open);
        s.push_str(&self.row(&esc(header), true));
        s.push_str(&self.divider(header.len()));
        for r in rows {
            s.push_str(&self.row(&esc(r), false));
        }
        s.push_str(close);
        s
    }
}
