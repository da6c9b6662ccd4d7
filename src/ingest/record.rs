//! The records of a table, held as columns, and one record's cells while the finder looks for
//! the table. The finder reads the text one record at a time: the records above the header
//! and a few below it are held as compact `Cells` (two allocations a record) while the header
//! is chosen; every record of the table then goes into `Records`, one text buffer per column,
//! which costs no allocation a record (at 10M records the records held one by one took about
//! 1 GB, and twice that many allocations).

pub use crate::cells::text_column::{TextColumn, TooLarge};
use std::ops::Index;

/// The records of a found table, as columns of text: record `row`'s cell `column` is
/// `columns[column].get(row)`.
#[derive(Debug, Clone, Default)]
pub struct Records {
    columns: Vec<TextColumn>,
    lines: Vec<u32>,
    /// The records cut out of a runaway quote (`--lenient`), in order.
    unbalanced: Vec<usize>,
}

/// One record of `Records`: the line it starts on, its cells, and whether it was cut out of a
/// runaway quote (its cells are then as written).
#[derive(Debug, Clone, Copy)]
pub struct TextRecord<'a> {
    pub line: usize,
    pub cells: RecordCells<'a>,
    pub unbalanced_quote: bool,
}

/// The cells of one record of `Records`, indexable as `&str`.
#[derive(Clone, Copy)]
pub struct RecordCells<'a> {
    records: &'a Records,
    row: usize,
}

impl<'a> RecordCells<'a> {
    pub fn len(&self) -> usize {
        self.records.columns.len()
    }

    pub fn is_empty(&self) -> bool {
        self.records.columns.is_empty()
    }

    pub fn get(&self, i: usize) -> Option<&'a str> {
        self.records.columns.get(i).map(|c| c.get(self.row))
    }

    /// Cell `i`, borrowed from the records (not from this view).
    pub fn at(&self, i: usize) -> &'a str {
        self.records.columns[i].get(self.row)
    }

    pub fn iter(&self) -> impl DoubleEndedIterator<Item = &'a str> + ExactSizeIterator + 'a {
        let (records, row) = (self.records, self.row);
        records.columns.iter().map(move |c| c.get(row))
    }
}

impl Index<usize> for RecordCells<'_> {
    type Output = str;

    fn index(&self, i: usize) -> &str {
        self.records.columns[i].get(self.row)
    }
}

impl std::fmt::Debug for RecordCells<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_list().entries(self.iter()).finish()
    }
}

impl Records {
    /// No records, in `width` columns.
    pub fn new(width: usize) -> Records {
        Records {
            columns: vec![TextColumn::default(); width],
            ..Records::default()
        }
    }

    pub fn len(&self) -> usize {
        self.lines.len()
    }

    pub fn is_empty(&self) -> bool {
        self.lines.is_empty()
    }

    pub fn width(&self) -> usize {
        self.columns.len()
    }

    /// Adds a record of `width` cells (missing cells at its end are empty, extra ones dropped).
    pub fn push<'c>(
        &mut self,
        line: usize,
        cells: impl IntoIterator<Item = &'c str>,
        unbalanced_quote: bool,
    ) -> Result<(), TooLarge> {
        let line = u32::try_from(line).map_err(|_| TooLarge)?;
        let mut cells = cells.into_iter();
        for column in &mut self.columns {
            column.push(cells.next().unwrap_or(""))?;
        }
        if unbalanced_quote {
            self.unbalanced.push(self.lines.len());
        }
        self.lines.push(line);
        Ok(())
    }

    /// Adds every record of `other` (of the same width) after these.
    pub fn append(&mut self, other: &Records) -> Result<(), TooLarge> {
        for (column, more) in self.columns.iter_mut().zip(&other.columns) {
            column.append(more)?;
        }
        let before = self.lines.len();
        self.unbalanced
            .extend(other.unbalanced.iter().map(|row| before + row));
        self.lines.extend(&other.lines);
        Ok(())
    }

    pub fn get(&self, row: usize) -> TextRecord<'_> {
        TextRecord {
            line: self.lines[row] as usize,
            cells: RecordCells { records: self, row },
            unbalanced_quote: self.unbalanced.binary_search(&row).is_ok(),
        }
    }

    pub fn first(&self) -> Option<TextRecord<'_>> {
        (!self.is_empty()).then(|| self.get(0))
    }

    pub fn iter(&self) -> impl ExactSizeIterator<Item = TextRecord<'_>> + '_ {
        (0..self.len()).map(move |row| self.get(row))
    }

    /// How many records were cut out of a runaway quote.
    pub fn unbalanced_count(&self) -> usize {
        self.unbalanced.len()
    }

    /// Column `column`'s cells, taken out (the records have no such text afterwards: call it
    /// only once every record has been read).
    pub fn take_column(&mut self, column: usize) -> TextColumn {
        std::mem::take(&mut self.columns[column])
    }
}

impl<'a> IntoIterator for &'a Records {
    type Item = TextRecord<'a>;
    type IntoIter = Box<dyn ExactSizeIterator<Item = TextRecord<'a>> + 'a>;

    fn into_iter(self) -> Self::IntoIter {
        Box::new(self.iter())
    }
}

/// A record's cells as text, however they are held: the csv reader's record as it is read,
/// or `Cells` once kept.
pub trait Fields {
    fn count(&self) -> usize;
    fn field(&self, i: usize) -> Option<&str>;

    fn fields(&self) -> impl DoubleEndedIterator<Item = &str> + ExactSizeIterator {
        (0..self.count()).map(move |i| self.field(i).unwrap_or(""))
    }

    /// How many cells hold something besides spaces.
    fn filled(&self) -> usize {
        self.fields().filter(|c| !c.trim().is_empty()).count()
    }

    /// Whether no cell holds a line break or `delimiter` (only a quoted cell can): such a
    /// record spans one line and cannot be a runaway quote.
    fn plain(&self, delimiter: u8) -> bool {
        self.fields()
            .all(|c| memchr::memchr2(b'\n', delimiter, c.as_bytes()).is_none())
    }
}

impl Fields for csv::StringRecord {
    fn count(&self) -> usize {
        self.len()
    }

    fn field(&self, i: usize) -> Option<&str> {
        self.get(i)
    }

    fn plain(&self, delimiter: u8) -> bool {
        memchr::memchr2(b'\n', delimiter, self.as_byte_record().as_slice()).is_none()
    }
}

impl Fields for Cells {
    fn count(&self) -> usize {
        self.len()
    }

    fn field(&self, i: usize) -> Option<&str> {
        self.get(i)
    }
}

/// The cells of one record, indexable as `&str`.
#[derive(Clone, PartialEq, Eq, Default)]
pub struct Cells {
    text: Box<str>,
    ends: Box<[u32]>,
}

impl Cells {
    /// The cells of any record, kept (refused at 4 GiB of text).
    pub fn of(record: &impl Fields) -> Result<Cells, TooLarge> {
        Cells::try_from_texts(record.fields())
    }

    pub fn len(&self) -> usize {
        self.ends.len()
    }

    pub fn is_empty(&self) -> bool {
        self.ends.is_empty()
    }

    pub fn get(&self, i: usize) -> Option<&str> {
        let end = *self.ends.get(i)? as usize;
        let start = match i {
            0 => 0,
            _ => self.ends[i - 1] as usize,
        };
        Some(&self.text[start..end])
    }

    pub fn iter(&self) -> impl DoubleEndedIterator<Item = &str> + ExactSizeIterator + '_ {
        (0..self.len()).map(move |i| &self[i])
    }

    /// Keeps the first `len` cells.
    pub fn truncate(&mut self, len: usize) {
        if len >= self.len() {
            return;
        }
        let end = match len {
            0 => 0,
            _ => self.ends[len - 1] as usize,
        };
        *self = Cells {
            text: self.text[..end].into(),
            ends: self.ends[..len].into(),
        };
    }
}

impl Index<usize> for Cells {
    type Output = str;

    fn index(&self, i: usize) -> &str {
        match self.get(i) {
            Some(cell) => cell,
            None => panic!("cell {i} of a record of {} cells", self.len()),
        }
    }
}

impl Cells {
    /// Cells from their texts; refused when their text together reaches 4 GiB (a record that
    /// long can only come from a quote left open in a file read with a raised --max-input-mb).
    pub fn try_from_texts<S: AsRef<str>>(
        cells: impl IntoIterator<Item = S>,
    ) -> Result<Cells, TooLarge> {
        let mut text = String::new();
        let mut ends = Vec::new();
        for cell in cells {
            text.push_str(cell.as_ref());
            ends.push(u32::try_from(text.len()).map_err(|_| TooLarge)?);
        }
        Ok(Cells {
            text: text.into(),
            ends: ends.into(),
        })
    }
}

/// Cells from texts known to be short (tests and literals): a panic past 4 GiB.
#[cfg(test)]
impl<S: AsRef<str>> FromIterator<S> for Cells {
    fn from_iter<I: IntoIterator<Item = S>>(cells: I) -> Cells {
        Cells::try_from_texts(cells).expect("cells under 4 GiB")
    }
}

impl std::fmt::Debug for Cells {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_list().entries(self.iter()).finish()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn records_read_back_by_row_and_column_and_columns_can_be_taken() {
        let mut records = Records::new(3);
        records.push(2, ["a", "1", "x"], false).unwrap();
        records.push(4, ["b", "2"], true).unwrap();
        records.push(5, ["c", "3", "z", "ignored"], false).unwrap();
        assert_eq!((records.len(), records.width()), (3, 3));
        let second = records.get(1);
        assert_eq!((second.line, second.unbalanced_quote), (4, true));
        assert_eq!(second.cells.iter().collect::<Vec<_>>(), vec!["b", "2", ""]);
        assert_eq!(&records.get(2).cells[2], "z");
        assert_eq!(records.unbalanced_count(), 1);
        assert!(!records.first().unwrap().unbalanced_quote);
        let lines: Vec<usize> = records.iter().map(|r| r.line).collect();
        assert_eq!(lines, vec![2, 4, 5]);
        let taken = records.take_column(1);
        assert_eq!(taken.iter().collect::<Vec<_>>(), vec!["1", "2", "3"]);
    }

    #[test]
    fn cells_read_back_as_the_csv_reader_split_them() {
        let text = "a,\"b, quoted\",,\"é\"\"x\"\n";
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(false)
            .from_reader(text.as_bytes());
        let mut record = csv::StringRecord::new();
        assert!(reader.read_record(&mut record).unwrap());
        let cells = Cells::of(&record).unwrap();
        assert_eq!(
            cells.iter().collect::<Vec<_>>(),
            vec!["a", "b, quoted", "", "é\"x"]
        );
        assert_eq!((cells.len(), &cells[3], cells.get(4)), (4, "é\"x", None));
    }

    #[test]
    fn truncation_and_collection_keep_the_first_cells() {
        let mut cells: Cells = ["x", "", "yz", "w"].into_iter().collect();
        assert_eq!((cells.len(), cells.is_empty()), (4, false));
        cells.truncate(3);
        assert_eq!(cells.iter().collect::<Vec<_>>(), vec!["x", "", "yz"]);
        // The dropped cells' text goes too: equal to the three cells collected afresh.
        assert_eq!(cells, ["x", "", "yz"].into_iter().collect::<Cells>());
        assert_eq!(format!("{cells:?}"), r#"["x", "", "yz"]"#);
        cells.truncate(0);
        assert!(cells.is_empty());
        let empty: Cells = Vec::<String>::new().into_iter().collect();
        assert_eq!(empty, Cells::default());
    }
}
