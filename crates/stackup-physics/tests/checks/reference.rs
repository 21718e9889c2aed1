//! Reading the reference tables in tests/reference/ (tab-separated, written
//! by the committed generator scripts): a first line naming the library
//! and its version, a line of column names, then one row per case whose
//! first column is its kind and the rest numbers.

pub struct Row {
    pub kind: String,
    pub v: Vec<f64>,
}

/// The table `file` of tests/reference/: its first line and its rows.
/// Panics (a test failure) when the column line does not start with
/// `columns` or a row has not `numbers` numbers.
pub fn table(file: &str, columns: &str, numbers: usize) -> (String, Vec<Row>) {
    let path = format!("{}/tests/reference/{file}", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(&path).expect("reference table present");
    let mut lines = text.lines();
    let header = lines.next().unwrap().to_string();
    let cols = lines.next().unwrap();
    assert!(cols.starts_with(columns), "{path}: columns {cols}");
    let rows = lines
        .filter(|l| !l.trim().is_empty())
        .map(|l| {
            let mut it = l.split('\t');
            let kind = it.next().unwrap().to_string();
            let v = it.map(|x| x.parse::<f64>().unwrap()).collect::<Vec<_>>();
            assert_eq!(v.len(), numbers, "{l}");
            Row { kind, v }
        })
        .collect();
    (header, rows)
}
