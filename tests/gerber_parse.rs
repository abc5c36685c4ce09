//! Every emitted Gerber file parses with the `gerber_parser` crate without errors.

mod common;

#[test]
fn every_gerber_parses_without_errors() {
    let out = common::demo_dir();
    let mut n = 0;
    for f in common::files_with_ext(out, "gbr") {
        let file = std::fs::File::open(&f).unwrap();
        let doc = gerber_parser::parse(std::io::BufReader::new(file))
            .unwrap_or_else(|(_, e)| panic!("{}: {e:?}", f.display()));
        let errors: Vec<String> = doc.errors().iter().map(|e| e.to_string()).collect();
        assert!(errors.is_empty(), "{}: {errors:#?}", f.display());
        n += 1;
    }
    // 4 probes × (4 copper + 2 mask + 2 legend + 1 profile).
    assert_eq!(n, 36);
}
