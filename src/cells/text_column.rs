//! A column of short texts held end to end in one string: the table's cells as they are read
//! (`ingest::record::Records`), the figures as given, and cells formatted once for writing.

/// Texts end to end in one string, with where each ends: a column of short texts without an
/// allocation per cell (four bytes a cell besides its text).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct TextColumn {
    text: String,
    ends: Vec<u32>,
}

impl TextColumn {
    pub fn with_capacity(cells: usize) -> TextColumn {
        TextColumn {
            text: String::new(),
            ends: Vec::with_capacity(cells),
        }
    }

    /// Adds a cell; refused once the column's text would pass 4 GiB.
    pub fn push(&mut self, cell: &str) -> Result<(), TooLarge> {
        let end = u32::try_from(self.text.len() + cell.len()).map_err(|_| TooLarge)?;
        self.text.push_str(cell);
        self.ends.push(end);
        Ok(())
    }

    /// Adds every cell of `other` after this column's.
    pub fn append(&mut self, other: &TextColumn) -> Result<(), TooLarge> {
        let base = u32::try_from(self.text.len()).map_err(|_| TooLarge)?;
        u32::try_from(self.text.len() + other.text.len()).map_err(|_| TooLarge)?;
        self.text.push_str(&other.text);
        self.ends.extend(other.ends.iter().map(|&e| base + e));
        Ok(())
    }

    pub fn len(&self) -> usize {
        self.ends.len()
    }

    pub fn is_empty(&self) -> bool {
        self.ends.is_empty()
    }

    pub fn get(&self, i: usize) -> &str {
        let start = match i {
            0 => 0,
            _ => self.ends[i - 1] as usize,
        };
        &self.text[start..self.ends[i] as usize]
    }

    pub fn iter(&self) -> impl Iterator<Item = &str> + '_ {
        (0..self.len()).map(move |i| self.get(i))
    }
}

/// A table's text is more than a column's or a record's buffer can address (4 GiB).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct TooLarge;

impl TooLarge {
    /// The error a user sees, about `file`.
    pub fn error(self, file: &str) -> crate::error::Error {
        crate::error::Error::bad_input(
            crate::error::Location::file(file),
            "one column or one record of the table holds more than 4 GiB of text (or the table has more than 4 billion lines; a record that long is often a quote left open)",
            "a table whose columns hold at most 4 GiB of text each",
            "split the table into smaller files, or read a csv or tsv file in pieces with --streaming",
        )
    }
}
