//! Whether a data file fits in memory, decided before it is read: a file too large fails at
//! once with a message that says so and what to do, not minutes later or by the system's
//! out-of-memory killer.

use std::path::Path;

use crate::error::{Error, Result};
use crate::report::thousands;

/// Memory a cell of the table takes while the file is read and typed, in bytes: measured with
/// `/usr/bin/time -f %M` on `acquest baseline` of the demo at 300,000 rows × 40 columns (12
/// million cells): 285 MB peak from CSV, 331 MB from Parquet, 24 and 28 bytes per cell; with a
/// margin for longer texts.
pub const BYTES_PER_CELL: u64 = 32;

/// The variable that sets the memory acquest may use, in MiB, in place of what the machine has
/// available (for a shared machine, or a container whose limit is not visible).
pub const LIMIT_VARIABLE: &str = "ACQUEST_MEMORY_MIB";

/// The memory available to this process in bytes: `ACQUEST_MEMORY_MIB` when set, else the
/// smaller of the system's available memory (`MemAvailable` in /proc/meminfo) and the room left
/// under a cgroup limit (`memory.max` − `memory.current`); `None` where neither can be read.
pub fn available() -> Option<u64> {
    if let Some(mib) = std::env::var(LIMIT_VARIABLE)
        .ok()
        .and_then(|v| v.trim().parse::<u64>().ok())
    {
        return Some(mib.saturating_mul(1 << 20));
    }
    let system = std::fs::read_to_string("/proc/meminfo")
        .ok()
        .and_then(|text| {
            text.lines()
                .find_map(|l| l.strip_prefix("MemAvailable:"))
                .and_then(|v| v.trim().trim_end_matches("kB").trim().parse::<u64>().ok())
                .map(|kb| kb * 1024)
        });
    let read = |name: &str| -> Option<u64> {
        std::fs::read_to_string(Path::new("/sys/fs/cgroup").join(name))
            .ok()
            .and_then(|v| v.trim().parse::<u64>().ok())
    };
    let cgroup =
        read("memory.max").map(|max| max.saturating_sub(read("memory.current").unwrap_or(0)));
    match (system, cgroup) {
        (Some(s), Some(c)) => Some(s.min(c)),
        (s, c) => s.or(c),
    }
}

/// Fails, naming the file, when reading `cells` cells (`estimate` says how they were counted)
/// needs more memory than is available.
pub fn check(path: &Path, cells: u64, estimate: &str) -> Result<()> {
    let Some(available) = available() else {
        return Ok(());
    };
    let needed = cells.saturating_mul(BYTES_PER_CELL);
    if needed <= available {
        return Ok(());
    }
    Err(Error::Format {
        path: path.to_path_buf(),
        reason: format!(
            "too large for the memory available: reading it needs about {} ({} cells, {estimate}, at about {BYTES_PER_CELL} bytes each) and {} is available. Take a random sample of its rows into a smaller file: each trial trains on at most --max-train-rows rows ({} by default), so a sample of a few hundred thousand rows loses little; or keep only the columns you need in the file; or run where more memory is free ({LIMIT_VARIABLE} sets the limit in MiB when the machine's own cannot be seen)",
            gib(needed),
            thousands(usize::try_from(cells).unwrap_or(usize::MAX)),
            gib(available),
            thousands(crate::settings::DEFAULT_MAX_TRAIN_ROWS)
        ),
    })
}

/// Bytes as GiB to one decimal ("3.2 GiB"), or MiB below one GiB.
fn gib(bytes: u64) -> String {
    let mib = bytes as f64 / (1u64 << 20) as f64;
    if mib < 1024.0 {
        format!("{mib:.0} MiB")
    } else {
        format!("{:.1} GiB", mib / 1024.0)
    }
}

/// Cells of a CSV file estimated from its size and its first lines: rows as the file's bytes
/// over the mean length of the lines in `head`, times the fields of the first line.
pub fn csv_cells(file_bytes: u64, head_bytes: usize, head_lines: usize, fields: usize) -> u64 {
    let mean_line = head_bytes as f64 / head_lines.max(1) as f64;
    let rows = (file_bytes as f64 / mean_line.max(1.0)).ceil();
    (rows * fields as f64) as u64
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cells_are_estimated_from_the_size_and_the_first_lines() {
        // Worked by hand: lines of 20 bytes in a 2,000,000-byte file are 100,000 rows; 5 fields.
        assert_eq!(csv_cells(2_000_000, 65_520, 3_276, 5), 500_000);
        // 65,536 bytes in 3,276 lines: 20.0049 bytes a line, 99,975.6 rows, rounded up.
        assert_eq!(csv_cells(2_000_000, 65_536, 3_276, 5), 99_976 * 5);
        assert_eq!(csv_cells(100, 100, 5, 4), 20);
        assert_eq!(gib(3 << 30), "3.0 GiB");
        assert_eq!(gib(5 << 20), "5 MiB");
    }
}
