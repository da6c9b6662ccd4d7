//! One record's cells, held compactly: the cells' text end to end in one string and where each
//! cell ends. The table finder keeps every record of a file in memory while it looks for the
//! table, so a record costs two exact-size allocations here (the csv crate's record costs three
//! growable ones and its position, about three times the memory on a long table).

use std::ops::Index;

/// A record of the table with the line it starts on.
#[derive(Debug, Clone)]
pub struct TextRecord {
    pub line: usize,
    /// The cells, indexable as `&str` (held compactly, not one allocation per cell).
    pub cells: Cells,
    /// The line was cut out of a runaway quote (`--lenient`): its cells are as written.
    pub unbalanced_quote: bool,
}

/// The cells of one record, indexable as `&str`.
#[derive(Clone, PartialEq, Eq, Default)]
pub struct Cells {
    text: Box<str>,
    ends: Box<[u32]>,
}

impl Cells {
    /// The cells of a record read by the csv reader from UTF-8 text. `None` when the record is
    /// not UTF-8 (it cannot be, cut from a `&str` at ASCII delimiters) or is 4 GiB or longer.
    pub fn from_byte_record(record: &csv::ByteRecord) -> Option<Cells> {
        let text = std::str::from_utf8(record.as_slice()).ok()?;
        let mut ends = Vec::with_capacity(record.len());
        let mut end = 0usize;
        for field in record.iter() {
            end += field.len();
            if !text.is_char_boundary(end) {
                return None;
            }
            ends.push(u32::try_from(end).ok()?);
        }
        Some(Cells {
            text: text.into(),
            ends: ends.into(),
        })
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

impl<S: AsRef<str>> FromIterator<S> for Cells {
    fn from_iter<I: IntoIterator<Item = S>>(cells: I) -> Cells {
        let mut text = String::new();
        let mut ends = Vec::new();
        for cell in cells {
            text.push_str(cell.as_ref());
            // A table is read from a file within --max-input-mb, far below 4 GiB.
            ends.push(u32::try_from(text.len()).unwrap_or(u32::MAX));
        }
        Cells {
            text: text.into(),
            ends: ends.into(),
        }
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
    fn cells_read_back_as_the_csv_reader_split_them() {
        let text = "a,\"b, quoted\",,\"é\"\"x\"\n";
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(false)
            .from_reader(text.as_bytes());
        let mut record = csv::ByteRecord::new();
        assert!(reader.read_byte_record(&mut record).unwrap());
        let cells = Cells::from_byte_record(&record).unwrap();
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
