//! A fast path for delimited text that holds only numbers (recordings): one pass over the
//! bytes into one vector of numbers per column, with no string per cell and no intermediate
//! frame. Anything else (quotes, ragged rows, a cell that is not a number) is declined, and the
//! caller reads the file the general way, which names the offending cell.

/// Headers and columns of a table of numbers; empty cells are `None`.
pub(super) struct Numbers {
    pub headers: Vec<String>,
    pub columns: Vec<Vec<Option<f64>>>,
}

/// Parses `text` as a header line and rows of numbers separated by `sep`, or `None` when it
/// is not such a table.
pub(super) fn parse(text: &str, sep: char) -> Option<Numbers> {
    if text.contains('"') {
        return None;
    }
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut lines = text.lines();
    let headers: Vec<String> = lines
        .next()?
        .split(sep)
        .map(|h| h.trim().to_string())
        .collect();
    let width = headers.len();
    let rows_guess = text.len() / (8 * width.max(1)) + 1;
    let mut columns: Vec<Vec<Option<f64>>> =
        (0..width).map(|_| Vec::with_capacity(rows_guess)).collect();
    for line in lines {
        if line.trim().is_empty() {
            continue;
        }
        let mut cells = line.split(sep);
        for column in columns.iter_mut() {
            let cell = cells.next()?.trim();
            column.push(if cell.is_empty() {
                None
            } else {
                Some(cell.parse::<f64>().ok()?)
            });
        }
        if cells.next().is_some() {
            return None;
        }
    }
    Some(Numbers { headers, columns })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_and_empty_cells() {
        let t = parse("time,a, b\r\n0,1.5,\r\n0.5,-2e-3,4\r\n", ',').unwrap();
        assert_eq!(t.headers, ["time", "a", "b"]);
        assert_eq!(t.columns[1], vec![Some(1.5), Some(-0.002)]);
        assert_eq!(t.columns[2], vec![None, Some(4.0)]);
    }

    #[test]
    fn declines_what_it_cannot_name() {
        assert!(parse("a,b\n1,x\n", ',').is_none(), "text cell");
        assert!(parse("a,b\n1\n", ',').is_none(), "short row");
        assert!(parse("a,b\n1,2,3\n", ',').is_none(), "long row");
        assert!(parse("a,b\n\"1\",2\n", ',').is_none(), "quotes");
        assert!(parse("", ',').is_none(), "no header");
    }
}
