//! The spot-analysis import: tolerant where the trade's files vary, exact about what is wrong.

use mineral::{Censored, ImportErrorKind, Oxide, parse_spot_table};
use proptest::prelude::*;

fn parse(text: &str) -> Result<mineral::SpotTable, mineral::ImportError> {
    parse_spot_table(text.as_bytes(), "spots.csv")
}

#[test]
fn headers_are_matched_tolerantly() {
    // Source: spellings seen in microprobe exports (common practice): upper case, units,
    // and the marks for total iron.
    let table = parse(
        "Sample,Grain,Phase,Spot,SIO2,Al2O3 (wt%),FeO*,na2o,K2O wt%,CaO,Total\n\
         S1,G1,host,1,64.5,18.4,0.10,0.80,15.6,0.20,99.60\n",
    )
    .expect("valid file");
    let a = &table.analyses[0];
    assert_eq!(a.id.sample, "S1");
    assert_eq!(a.id.phase, "host");
    assert_eq!(a.wt(Oxide::SiO2), 64.5);
    assert_eq!(a.wt(Oxide::Al2O3), 18.4);
    assert_eq!(a.wt(Oxide::FeO), 0.10);
    assert_eq!(a.wt(Oxide::Na2O), 0.80);
    assert_eq!(a.wt(Oxide::K2O), 15.6);
    assert_eq!(a.reported_total_wt, Some(99.60));
    for header in ["FeOt", "FeO total", "FEO (wt.%)", "FeO_tot"] {
        assert_eq!(Oxide::from_header(header), Some(Oxide::FeO), "{header}");
    }
    assert_eq!(Oxide::from_header("Fe2O3t"), Some(Oxide::Fe2O3));
    assert_eq!(Oxide::from_header("comment"), None);
}

#[test]
fn decimal_comma_files_are_detected() {
    let table =
        parse("spot;SiO2;Al2O3;K2O\na;64,50;18,40;16,1\nb;65,1;18,3;15,9\n").expect("valid");
    assert!(table.decimal_comma);
    assert_eq!(table.delimiter, ';');
    assert_eq!(table.analyses[1].wt(Oxide::SiO2), 65.1);
}

#[test]
fn tab_separated_and_quoted_fields() {
    let table = parse("spot\tSiO2\tK2O\n\"a, rim\"\t64.5\t16.0\n").expect("valid");
    assert_eq!(table.analyses[0].id.spot, "a, rim");
    let table = parse("spot,SiO2,K2O\n\"say \"\"hi\"\"\",64.5,16.0\n").expect("valid");
    assert_eq!(table.analyses[0].id.spot, "say \"hi\"");
}

#[test]
fn censored_values_read_as_zero_with_their_text() {
    let table = parse("spot,SiO2,BaO,SrO,MgO,TiO2\na,64.5,n.d.,<0.02,bdl,\n").expect("valid");
    let a = &table.analyses[0];
    assert_eq!(a.wt(Oxide::BaO), 0.0);
    assert!(matches!(
        a.censored.get(&Oxide::BaO),
        Some(Censored::NotDetermined { .. })
    ));
    assert!(matches!(
        a.censored.get(&Oxide::SrO),
        Some(Censored::BelowDetection { limit_wt: Some(l), .. }) if (*l - 0.02).abs() < 1e-12
    ));
    assert!(matches!(
        a.censored.get(&Oxide::MgO),
        Some(Censored::BelowDetection { limit_wt: None, .. })
    ));
    assert!(matches!(
        a.censored.get(&Oxide::TiO2),
        Some(Censored::NotDetermined { text }) if text.is_empty()
    ));
}

#[test]
fn unknown_columns_are_reported_not_dropped() {
    let table = parse("spot,SiO2,K2O,operator\na,64.5,16.0,jd\n").expect("valid");
    assert_eq!(table.ignored_columns, vec![(4, "operator".to_string())]);
}

#[test]
fn latin1_files_are_read() {
    let mut bytes = b"spot,SiO2,K2O,note\na,64.5,16.0,".to_vec();
    bytes.push(0xB5); // Latin-1 micro sign, invalid as UTF-8
    bytes.extend_from_slice(b"m\n");
    let table = parse_spot_table(&bytes, "latin.csv").expect("valid");
    assert!(table.latin1);
}

#[test]
fn a_bad_number_names_file_line_column_and_text() {
    let err = parse("# exported\nspot,SiO2,K2O\na,64.5,16.0\nb,6x.1,16.0\n").expect_err("bad cell");
    assert_eq!(err.file, "spots.csv");
    assert_eq!((err.line, err.column), (4, 2));
    assert!(matches!(
        &err.kind,
        ImportErrorKind::BadNumber { column_name, text } if column_name == "SiO2" && text == "6x.1"
    ));
    assert!(
        err.to_string()
            .starts_with("spots.csv:4:2: '6x.1' in column 'SiO2'")
    );
}

#[test]
fn a_bad_cell_with_control_bytes_is_quoted_on_one_readable_line() {
    // A cell holding an escape byte, a form feed and a long run of text (as a fuzz run fed
    // in): the message escapes the control characters and cuts the quote at 40 characters;
    // the error keeps the cell's text whole.
    let cell = format!("6\u{1b}[31m\u{c}{}", "x".repeat(60));
    let err = parse(&format!("SiO2,Al2O3\n{cell},18.4\n")).expect_err("bad number");
    let text = err.to_string();
    assert!(text.contains("'6\\u{1b}[31m\\u{c}xxx"), "{text}");
    assert!(text.contains("x…' in column 'SiO2'"), "{text}");
    assert!(!text.chars().any(char::is_control), "{text:?}");
    assert!(
        matches!(&err.kind, ImportErrorKind::BadNumber { text, .. } if *text == cell),
        "{err:?}"
    );
}

#[test]
fn nan_and_infinity_are_not_numbers() {
    for text in ["NaN", "inf", "-infinity", "0x10", "1e999"] {
        let err = parse(&format!("spot,SiO2\na,{text}\n")).expect_err(text);
        assert!(
            matches!(err.kind, ImportErrorKind::BadNumber { .. }),
            "{text}"
        );
        assert_eq!((err.line, err.column), (2, 2));
    }
}

#[test]
fn each_structural_problem_has_its_own_error() {
    let kind = |text: &str| parse(text).expect_err(text).kind;
    assert!(matches!(kind(""), ImportErrorKind::Empty));
    assert!(matches!(
        kind("\n\n# only a comment\n"),
        ImportErrorKind::Empty
    ));
    assert!(matches!(
        kind("spot,colour\na,red\n"),
        ImportErrorKind::NoOxideColumns
    ));
    assert!(matches!(kind("spot,SiO2,K2O\n"), ImportErrorKind::NoRows));
    assert!(matches!(
        kind("spot,FeO,FeOt\na,1,1\n"),
        ImportErrorKind::DuplicateColumn {
            first_column: 2,
            ..
        }
    ));
    assert!(matches!(
        kind("spot,,SiO2\na,1,1\n"),
        ImportErrorKind::EmptyHeader
    ));
    let err = parse("spot,SiO2,K2O\na,64.5\n").expect_err("short row");
    assert!(matches!(
        err.kind,
        ImportErrorKind::FieldCount {
            expected: 3,
            found: 2
        }
    ));
    assert_eq!(err.line, 2);
    let err = parse("spot,SiO2\n\"a,64.5\n").expect_err("open quote");
    assert!(matches!(err.kind, ImportErrorKind::UnterminatedQuote));
    assert_eq!((err.line, err.column), (2, 1));
}

#[test]
fn missing_file_is_an_io_error_naming_the_path() {
    let err = mineral::read_spot_file(std::path::Path::new("/no/such/dir/spots.csv"))
        .expect_err("missing");
    assert!(matches!(err.kind, ImportErrorKind::Io(_)));
    assert!(err.to_string().contains("/no/such/dir/spots.csv"));
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(2000))]

    /// Arbitrary bytes never panic: they parse or give an error with a location.
    #[test]
    fn arbitrary_bytes_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..400)) {
        let _ = parse_spot_table(&bytes, "fuzz.csv");
    }

    /// Text built from the file's own alphabet (delimiters, quotes, digits, oxide names) never
    /// panics, and whatever parses holds only finite values.
    #[test]
    fn csv_like_text_never_panics(parts in proptest::collection::vec(
        prop_oneof![
            Just(",".to_string()), Just(";".to_string()), Just("\t".to_string()),
            Just("\n".to_string()), Just("\"".to_string()), Just("SiO2".to_string()),
            Just("K2O".to_string()), Just("spot".to_string()), Just("n.d.".to_string()),
            Just("<".to_string()), "[0-9.,eE+-]{1,6}",
        ], 0..60))
    {
        let text: String = parts.concat();
        if let Ok(table) = parse_spot_table(text.as_bytes(), "fuzz.csv") {
            for a in &table.analyses {
                prop_assert!(a.oxides_wt.values().all(|v| v.is_finite()));
            }
        }
    }
}
