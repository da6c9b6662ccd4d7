//! The text of one cell, below every layer that reads or writes tables: the exact number parser
//! (`number`), the words of headers and messages (`words`) and a column of texts held end to
//! end (`text_column`). Nothing here knows about files
//! or frames, so the table finder, the reference loader and the csv writer's formula guard all
//! read cells by the same rules without importing one another.

pub mod number;
pub mod text_column;
pub mod words;
