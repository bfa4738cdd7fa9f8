//! A Parquet file's page headers checked before it is decoded. polars' decoder takes a data
//! page's value count as given, and a damaged header with a negative count makes it ask for an
//! allocation of some 2^61 bytes and abort the process (found by tests/fuzz.rs; the input is
//! tests/fuzz/aborts/page-length.parquet). Every page header of every column chunk is read here
//! with polars' own page reader and its counts checked against the chunk's.

use polars_parquet::parquet::page::{CompressedPage, DataPageHeader};
use polars_parquet::parquet::read::{get_page_iterator, read_metadata};
use polars_utils::mmap::{MMapSemaphore, MemReader, MemSlice};

/// `Err` with the reason when a page header cannot be right: a count below zero, or more
/// values or rows on a page than its column chunk holds.
pub fn check(file: &std::fs::File) -> Result<(), String> {
    // Mapped, not read: the file's pages are visited, not held.
    let map = MMapSemaphore::new_from_file(file).map_err(|e| format!("cannot map it: {e}"))?;
    let data = MemSlice::from_mmap(std::sync::Arc::new(map));
    let size = data.len();
    let metadata = read_metadata(&mut std::io::Cursor::new(&data[..]))
        .map_err(|e| format!("its metadata cannot be read: {e}"))?;
    for (g, group) in metadata.row_groups.iter().enumerate() {
        for chunk in group.parquet_columns() {
            let column = chunk
                .descriptor()
                .path_in_schema
                .iter()
                .map(|p| p.as_str())
                .collect::<Vec<_>>()
                .join(".");
            let most = chunk.num_values();
            if most < 0 {
                return Err(format!(
                    "column '{column}' of row group {}: the metadata gives {most} values",
                    g + 1
                ));
            }
            let pages = get_page_iterator(chunk, MemReader::new(data.clone()), Vec::new(), size)
                .map_err(|e| format!("column '{column}': {e}"))?;
            for page in pages {
                let page = page.map_err(|e| format!("column '{column}': {e}"))?;
                let CompressedPage::Data(page) = page else {
                    continue;
                };
                // Each count with the most it can be: values and rows up to the chunk's
                // values, nulls up to the page's values, level bytes up to the file's size.
                let limits: Vec<(&str, i32, i64)> = match page.header() {
                    DataPageHeader::V1(h) => vec![("values", h.num_values, most)],
                    DataPageHeader::V2(h) => vec![
                        ("values", h.num_values, most),
                        ("nulls", h.num_nulls, i64::from(h.num_values)),
                        ("rows", h.num_rows, most),
                        (
                            "definition level bytes",
                            h.definition_levels_byte_length,
                            size as i64,
                        ),
                        (
                            "repetition level bytes",
                            h.repetition_levels_byte_length,
                            size as i64,
                        ),
                    ],
                };
                for (what, count, limit) in limits {
                    if count < 0 || i64::from(count) > limit {
                        return Err(format!(
                            "column '{column}' of row group {}: a page header gives {count} {what} (at most {limit} can be right)",
                            g + 1
                        ));
                    }
                }
            }
        }
    }
    Ok(())
}
