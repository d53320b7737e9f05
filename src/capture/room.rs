//! Room for a capture's samples, asked for fallibly: a machine that cannot hold a file's
//! columns refuses with [`LoadErrorKind::OutOfMemory`], naming the megabytes, instead of ending
//! the process (see [`crate::memory`]). Every loader sizes its columns here.

use super::LoadErrorKind;

/// A column of `rows` zeros, or the error saying the memory could not be had (zeroed pages
/// from the allocator: a page no row reaches is never touched).
pub(crate) fn zeroed_column(rows: usize, columns: usize) -> Result<Vec<f64>, LoadErrorKind> {
    let no_memory = || LoadErrorKind::OutOfMemory {
        bytes: (rows as u64).saturating_mul(8),
        rows: rows as u64,
        columns,
    };
    if rows == 0 {
        return Ok(Vec::new());
    }
    let layout = std::alloc::Layout::array::<f64>(rows).map_err(|_| no_memory())?;
    // SAFETY: `layout` has a non-zero size (rows > 0); the pointer, when not null, is a fresh
    // allocation of the global allocator for exactly `rows` f64 with f64's alignment, all bytes
    // zero (0.0), which is what `Vec::from_raw_parts` requires for length = capacity = rows.
    unsafe {
        let ptr = crate::memory::fallible(|| std::alloc::alloc_zeroed(layout)).cast::<f64>();
        if ptr.is_null() {
            return Err(no_memory());
        }
        Ok(Vec::from_raw_parts(ptr, rows, rows))
    }
}

/// Room for `more` values in `col` (one of `columns`), or the error saying it could not be had.
pub(crate) fn reserve(
    col: &mut Vec<f64>,
    more: usize,
    columns: usize,
) -> Result<(), LoadErrorKind> {
    crate::memory::fallible(|| col.try_reserve_exact(more)).map_err(|_| {
        LoadErrorKind::OutOfMemory {
            bytes: (more as u64).saturating_mul(8),
            rows: (col.len() + more) as u64,
            columns,
        }
    })
}

/// `columns` empty columns with room for `rows` values each.
pub(crate) fn empty_columns(rows: usize, columns: usize) -> Result<Vec<Vec<f64>>, LoadErrorKind> {
    (0..columns)
        .map(|_| {
            let mut col = Vec::new();
            reserve(&mut col, rows, columns)?;
            Ok(col)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Columns that cannot be had are an error that says so, not an abort. Sizes past isize::MAX
    /// bytes (Rust's limit for one allocation) are refused before asking; what the machine
    /// refuses takes the same path (the allocator's null), but no size is refused everywhere:
    /// 2^59 bytes were granted untouched here, so that case is checked by hand under
    /// `ulimit -v` (DEVELOPERS.md).
    #[test]
    fn columns_beyond_the_machine_are_an_error_naming_the_memory() {
        for (rows, why) in [
            (usize::MAX / 8, "past isize::MAX"),
            (usize::MAX / 4, "overflows"),
        ] {
            match zeroed_column(rows, 2) {
                Err(e @ LoadErrorKind::OutOfMemory { .. }) => {
                    let text = e.to_string();
                    assert!(
                        text.starts_with("not enough memory for its samples"),
                        "{text}"
                    );
                    assert!(text.contains("of 2 channel(s)"), "{text}");
                }
                other => panic!("{why}: {:?}", other.map(|v| v.len())),
            }
            let mut col = vec![1.0; 4];
            assert!(matches!(
                reserve(&mut col, rows, 2),
                Err(LoadErrorKind::OutOfMemory { .. })
            ));
            assert_eq!(col, [1.0; 4], "the column is left as it was");
        }
        let col = zeroed_column(1000, 2).unwrap();
        assert_eq!((col.len(), col.iter().all(|&x| x == 0.0)), (1000, true));
        assert!(zeroed_column(0, 2).unwrap().is_empty());
    }

    #[test]
    fn empty_columns_have_room_or_say_why_not() {
        let cols = empty_columns(1000, 3).unwrap();
        assert_eq!(cols.len(), 3);
        assert!(cols.iter().all(|c| c.is_empty() && c.capacity() >= 1000));
        assert!(matches!(
            empty_columns(usize::MAX / 8, 2),
            Err(LoadErrorKind::OutOfMemory { columns: 2, .. })
        ));
    }
}
