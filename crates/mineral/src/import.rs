//! Import of spot analyses from delimited text (CSV, semicolon- or tab-separated).
//!
//! What is accepted:
//! - a header line (blank lines and lines starting with `#` before it are skipped), whose oxide
//!   names are matched case-insensitively and tolerantly ([`Oxide::from_header`]);
//! - id columns `sample`, `grain`, `phase` and `spot` (also `point`, `id`, `label`,
//!   `analysis`), and a `total` column, which is checked against the sum of the oxides;
//! - comma, semicolon or tab delimiters (from the header), and decimal commas in files that are
//!   not comma-delimited (detected from the data);
//! - `n.d.`, `nd`, `n/a`, `-`, empty cells (not determined) and `bdl`, `<dl`, `<0.02` (below
//!   detection), read as zero with a flag;
//! - UTF-8, or Latin-1 when the file is not valid UTF-8.
//!
//! Any other cell that is not a number stops the import with an [`ImportError`] naming the file,
//! line, column and offending text. Columns that are neither oxides nor ids are listed in
//! [`SpotTable::ignored_columns`], never dropped silently.

use std::collections::BTreeMap;
use std::path::Path;

use serde::Serialize;

use crate::analysis::{Analysis, Censored};
use crate::oxide::{Oxide, normalise_header};

/// Spot analyses read from one file.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SpotTable {
    /// The analyses, in file order.
    pub analyses: Vec<Analysis>,
    /// The line of the file each analysis starts on (1-based), parallel to `analyses`.
    pub lines: Vec<usize>,
    /// Column headers that were neither oxides, ids nor a total, with their 1-based column.
    pub ignored_columns: Vec<(usize, String)>,
    /// The field delimiter found.
    pub delimiter: char,
    /// Whether numbers were written with a decimal comma.
    pub decimal_comma: bool,
    /// Whether the file was read as Latin-1 because it was not valid UTF-8.
    pub latin1: bool,
}

/// Where an import failed and why.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{file}:{line}:{column}: {kind}")]
pub struct ImportError {
    /// The file (or the name given for in-memory text).
    pub file: String,
    /// 1-based line (0 when the problem is the whole file).
    pub line: usize,
    /// 1-based column, counted in fields (0 when the problem is a whole line or the file).
    pub column: usize,
    /// What went wrong.
    pub kind: ImportErrorKind,
}

/// The kinds of import failure.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum ImportErrorKind {
    /// The file could not be read.
    #[error("cannot read the file: {0}")]
    Io(String),
    /// There is no header line.
    #[error("the file is empty: expected a header line naming the oxide columns")]
    Empty,
    /// The header names no oxide.
    #[error(
        "no oxide column in the header (expected names such as SiO2, Al2O3, Na2O, K2O, CaO, FeO)"
    )]
    NoOxideColumns,
    /// Two columns mean the same oxide or id.
    #[error("column '{}' repeats column {first_column} ('{}')", shown(.name), shown(.first_name))]
    DuplicateColumn {
        /// This header.
        name: String,
        /// The earlier column with the same meaning (1-based).
        first_column: usize,
        /// Its header.
        first_name: String,
    },
    /// A header cell is empty.
    #[error("the header has an empty column name")]
    EmptyHeader,
    /// A row has a different number of fields from the header.
    #[error("the row has {found} fields but the header has {expected}")]
    FieldCount {
        /// Fields in the header.
        expected: usize,
        /// Fields in this row.
        found: usize,
    },
    /// A value cell holds text that is not a number nor a recognised not-determined mark.
    #[error(
        "'{}' in column '{}' is not a number (use a number, 'n.d.', 'bdl' or '<limit')",
        shown(.text),
        shown(.column_name)
    )]
    BadNumber {
        /// The column header.
        column_name: String,
        /// The offending text.
        text: String,
    },
    /// A quoted field is never closed.
    #[error("a quoted field opened here is never closed")]
    UnterminatedQuote,
    /// The header is there but no data row follows.
    #[error("the file has a header but no analyses")]
    NoRows,
}

/// A cell's text as a message quotes it: control characters escaped (a tab reads `\t`, a
/// stray byte `\u{1b}`), and cut after 40 characters, so the message stays one readable line.
fn shown(text: &str) -> String {
    const LONGEST: usize = 40;
    let mut out = String::new();
    for (i, c) in text.chars().enumerate() {
        if i == LONGEST {
            out.push('…');
            break;
        }
        if c.is_control() {
            out.extend(c.escape_default());
        } else {
            out.push(c);
        }
    }
    out
}

/// Read spot analyses from a file.
pub fn read_spot_file(path: &Path) -> Result<SpotTable, ImportError> {
    let name = path.display().to_string();
    let bytes = std::fs::read(path).map_err(|e| ImportError {
        file: name.clone(),
        line: 0,
        column: 0,
        kind: ImportErrorKind::Io(e.to_string()),
    })?;
    parse_spot_table(&bytes, &name)
}

/// What a column means.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Role {
    Oxide(Oxide),
    Sample,
    Grain,
    Phase,
    Spot,
    Total,
    Ignored,
}

fn role_of(header: &str) -> Role {
    if let Some(oxide) = Oxide::from_header(header) {
        return Role::Oxide(oxide);
    }
    match normalise_header(header).as_str() {
        "sample" | "specimen" | "samplename" => Role::Sample,
        "grain" | "crystal" | "grainid" => Role::Grain,
        "phase" | "phasename" => Role::Phase,
        "spot" | "spotid" | "point" | "pointid" | "id" | "label" | "analysis" | "no" => Role::Spot,
        "total" | "totals" | "sum" | "oxidetotal" => Role::Total,
        _ => Role::Ignored,
    }
}

/// Parse spot analyses from the bytes of a delimited text file; `file` names it in errors.
pub fn parse_spot_table(bytes: &[u8], file: &str) -> Result<SpotTable, ImportError> {
    let (text, latin1) = match std::str::from_utf8(bytes) {
        Ok(text) => (text.trim_start_matches('\u{feff}').to_string(), false),
        Err(_) => (bytes.iter().map(|&b| char::from(b)).collect(), true),
    };
    let error = |line: usize, column: usize, kind: ImportErrorKind| ImportError {
        file: file.to_string(),
        line,
        column,
        kind,
    };

    let Some((header_index, header_line)) = text
        .lines()
        .enumerate()
        .find(|(_, l)| !l.trim().is_empty() && !l.trim_start().starts_with('#'))
    else {
        return Err(error(0, 0, ImportErrorKind::Empty));
    };
    let delimiter = detect_delimiter(header_line);
    let body: String = text
        .lines()
        .skip(header_index)
        .collect::<Vec<_>>()
        .join("\n");
    let records = split_records(&body, delimiter, header_index + 1)
        .map_err(|(line, column)| error(line, column, ImportErrorKind::UnterminatedQuote))?;
    let Some((header_record, rows)) = records.split_first() else {
        return Err(error(0, 0, ImportErrorKind::Empty));
    };

    // Column roles from the header.
    let headers: Vec<String> = header_record
        .fields
        .iter()
        .map(|f| f.trim().to_string())
        .collect();
    let mut roles = Vec::with_capacity(headers.len());
    let mut seen: BTreeMap<String, usize> = BTreeMap::new();
    let mut ignored_columns = Vec::new();
    for (index, name) in headers.iter().enumerate() {
        let column = index + 1;
        if name.is_empty() {
            // A trailing delimiter gives an empty last header: harmless if its cells are empty.
            roles.push(Role::Ignored);
            if index + 1 != headers.len() {
                return Err(error(
                    header_record.line,
                    column,
                    ImportErrorKind::EmptyHeader,
                ));
            }
            continue;
        }
        let role = role_of(name);
        if role == Role::Ignored {
            ignored_columns.push((column, name.clone()));
        } else {
            let key = format!("{role:?}");
            if let Some(&first) = seen.get(&key) {
                return Err(error(
                    header_record.line,
                    column,
                    ImportErrorKind::DuplicateColumn {
                        name: name.clone(),
                        first_column: first,
                        first_name: headers[first - 1].clone(),
                    },
                ));
            }
            seen.insert(key, column);
        }
        roles.push(role);
    }
    if !roles.iter().any(|r| matches!(r, Role::Oxide(_))) {
        return Err(error(
            header_record.line,
            0,
            ImportErrorKind::NoOxideColumns,
        ));
    }

    let decimal_comma = delimiter != ',' && uses_decimal_comma(rows, &roles);

    let mut analyses = Vec::new();
    let mut lines = Vec::new();
    for record in rows {
        if record.fields.iter().all(|f| f.trim().is_empty()) {
            continue;
        }
        let mut fields = record.fields.clone();
        // Tolerate trailing empty fields beyond the header (a trailing delimiter).
        while fields.len() > headers.len() && fields.last().is_some_and(|f| f.trim().is_empty()) {
            fields.pop();
        }
        if fields.len() != headers.len() {
            return Err(error(
                record.line,
                0,
                ImportErrorKind::FieldCount {
                    expected: headers.len(),
                    found: fields.len(),
                },
            ));
        }
        let mut analysis = Analysis::default();
        for (index, (raw, role)) in fields.iter().zip(&roles).enumerate() {
            let cell = raw.trim();
            let column = index + 1;
            match *role {
                Role::Sample => analysis.id.sample = cell.to_string(),
                Role::Grain => analysis.id.grain = cell.to_string(),
                Role::Phase => analysis.id.phase = cell.to_string(),
                Role::Spot => analysis.id.spot = cell.to_string(),
                Role::Ignored => {}
                Role::Total | Role::Oxide(_) => {
                    let value = read_value(cell, decimal_comma).ok_or_else(|| {
                        error(
                            record.line,
                            column,
                            ImportErrorKind::BadNumber {
                                column_name: headers[index].clone(),
                                text: cell.to_string(),
                            },
                        )
                    })?;
                    match (role, value) {
                        (Role::Oxide(oxide), Value::Number(x)) => {
                            analysis.oxides_wt.insert(*oxide, x);
                        }
                        (Role::Oxide(oxide), Value::Censored(c)) => {
                            analysis.oxides_wt.insert(*oxide, 0.0);
                            analysis.censored.insert(*oxide, c);
                        }
                        (_, Value::Number(x)) => analysis.reported_total_wt = Some(x),
                        (_, Value::Censored(_)) => {}
                    }
                }
            }
        }
        if analysis.id.spot.is_empty() {
            analysis.id.spot = format!("line {}", record.line);
        }
        analyses.push(analysis);
        lines.push(record.line);
    }
    if analyses.is_empty() {
        return Err(error(header_record.line, 0, ImportErrorKind::NoRows));
    }
    Ok(SpotTable {
        analyses,
        lines,
        ignored_columns,
        delimiter,
        decimal_comma,
        latin1,
    })
}

/// One record of the delimited text.
#[derive(Debug, Clone)]
struct Record {
    /// 1-based line the record starts on.
    line: usize,
    fields: Vec<String>,
}

/// The delimiter of a header line: tab, then semicolon, then comma, whichever occurs.
fn detect_delimiter(header: &str) -> char {
    ['\t', ';', ',']
        .into_iter()
        .find(|&d| header.contains(d))
        .unwrap_or(',')
}

/// Split text into records and fields (RFC 4180 quoting; quoted fields may span lines).
/// On an unclosed quote returns the (line, column) where it opened.
fn split_records(
    text: &str,
    delimiter: char,
    first_line: usize,
) -> Result<Vec<Record>, (usize, usize)> {
    let mut records = Vec::new();
    let mut fields = Vec::new();
    let mut field = String::new();
    let mut line = first_line;
    let mut record_line = first_line;
    let mut in_quotes = false;
    let mut quote_opened = (0, 0);
    let mut chars = text.chars().peekable();
    while let Some(c) = chars.next() {
        if in_quotes {
            match c {
                '"' if chars.peek() == Some(&'"') => {
                    field.push('"');
                    chars.next();
                }
                '"' => in_quotes = false,
                '\n' => {
                    line += 1;
                    field.push('\n');
                }
                _ => field.push(c),
            }
            continue;
        }
        match c {
            '"' if field.trim().is_empty() => {
                field.clear();
                in_quotes = true;
                quote_opened = (line, fields.len() + 1);
            }
            '\r' => {}
            '\n' => {
                fields.push(std::mem::take(&mut field));
                records.push(Record {
                    line: record_line,
                    fields: std::mem::take(&mut fields),
                });
                line += 1;
                record_line = line;
            }
            c if c == delimiter => fields.push(std::mem::take(&mut field)),
            _ => field.push(c),
        }
    }
    if in_quotes {
        return Err(quote_opened);
    }
    if !field.is_empty() || !fields.is_empty() {
        fields.push(field);
        records.push(Record {
            line: record_line,
            fields,
        });
    }
    Ok(records)
}

/// Whether the numeric cells use a decimal comma: some value cell looks like `12,34` and none
/// looks like `12.34`.
fn uses_decimal_comma(rows: &[Record], roles: &[Role]) -> bool {
    let mut comma = 0usize;
    let mut point = 0usize;
    for record in rows {
        for (field, role) in record.fields.iter().zip(roles) {
            if !matches!(role, Role::Oxide(_) | Role::Total) {
                continue;
            }
            let cell = field.trim();
            let digits_around = |sep: char| {
                cell.split_once(sep).is_some_and(|(a, b)| {
                    a.trim_start_matches(['-', '+', '<'])
                        .chars()
                        .all(|c| c.is_ascii_digit())
                        && !b.is_empty()
                        && b.chars().all(|c| c.is_ascii_digit())
                })
            };
            if digits_around(',') {
                comma += 1;
            } else if digits_around('.') {
                point += 1;
            }
        }
    }
    comma > 0 && point == 0
}

/// A value cell read.
enum Value {
    Number(f64),
    Censored(Censored),
}

/// Read a value cell: a finite number, or a recognised not-determined / below-detection mark.
fn read_value(cell: &str, decimal_comma: bool) -> Option<Value> {
    let lower = cell.to_ascii_lowercase();
    let compact: String = lower.chars().filter(|c| !c.is_whitespace()).collect();
    match compact.as_str() {
        "" | "nd" | "n.d." | "n.d" | "n/a" | "na" | "-" | "--" | "---" => {
            return Some(Value::Censored(Censored::NotDetermined {
                text: cell.to_string(),
            }));
        }
        "bdl" | "b.d.l." | "b.d.l" | "<dl" | "<lod" | "<d.l." | "bd" | "b.d." | "<ld" => {
            return Some(Value::Censored(Censored::BelowDetection {
                text: cell.to_string(),
                limit_wt: None,
            }));
        }
        _ => {}
    }
    if let Some(limit) = compact.strip_prefix('<') {
        let limit = parse_number(limit, decimal_comma)?;
        return Some(Value::Censored(Censored::BelowDetection {
            text: cell.to_string(),
            limit_wt: Some(limit),
        }));
    }
    parse_number(&compact, decimal_comma).map(Value::Number)
}

/// A plain finite decimal number (no `inf`, `nan` or hexadecimal).
fn parse_number(text: &str, decimal_comma: bool) -> Option<f64> {
    let text = if decimal_comma {
        text.replace(',', ".")
    } else {
        text.to_string()
    };
    let plain = !text.is_empty()
        && text
            .chars()
            .all(|c| c.is_ascii_digit() || matches!(c, '.' | '-' | '+' | 'e' | 'E'))
        && text.chars().any(|c| c.is_ascii_digit());
    if !plain {
        return None;
    }
    text.parse::<f64>().ok().filter(|x| x.is_finite())
}
