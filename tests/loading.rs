//! The same study read from TSV, CSV and Parquet tables gives the same validated Study.

use nevermet::study;
use nevermet::table::{Table, read_table, write_table};

use crate::util::TempStudy;

/// Rewrites a text table in another format, cell for cell.
fn convert(src: &std::path::Path, dst: &std::path::Path) {
    let raw = read_table(src).unwrap();
    let mut t = Table::new();
    for (h, c) in raw.headers.iter().zip(&raw.columns) {
        let cells: Vec<String> = (0..raw.height())
            .map(|r| c.text(r).unwrap_or_default())
            .collect();
        // Numbers stay numbers in Parquet, as a researcher's own export would write them.
        match cells.iter().all(|x| x.parse::<f64>().is_ok())
            && dst.extension().unwrap() == "parquet"
        {
            true => t = t.float(h, cells.iter().map(|x| x.parse().unwrap()).collect()),
            false => t = t.text(h, cells),
        }
    }
    write_table(&t, dst).unwrap();
}

#[test]
fn tsv_csv_and_parquet_tables_give_the_same_study() {
    let base = TempStudy::new();
    let reference = study::load(&base.toml()).unwrap();
    for ext in ["csv", "parquet"] {
        let s = TempStudy::new();
        for name in ["members", "events", "channels", "quality"] {
            convert(
                &s.path(&format!("{name}.tsv")),
                &s.path(&format!("{name}.{ext}")),
            );
            std::fs::remove_file(s.path(&format!("{name}.tsv"))).unwrap();
            s.edit("study.toml", |t| {
                t.replace(&format!("\"{name}.tsv\""), &format!("\"{name}.{ext}\""))
            });
        }
        let loaded = study::load(&s.toml()).unwrap_or_else(|e| panic!("{ext}: {e}"));
        assert_eq!(loaded.members, reference.members, "{ext}");
        assert_eq!(loaded.dyads, reference.dyads, "{ext}");
        assert_eq!(loaded.events, reference.events, "{ext}");
        assert_eq!(loaded.channels, reference.channels, "{ext}");
        assert_eq!(loaded.bad, reference.bad, "{ext}");
        assert_eq!(loaded.conditions, reference.conditions, "{ext}");
    }
}

#[test]
fn parquet_recordings_give_the_same_signals() {
    let base = TempStudy::new();
    let reference = study::load(&base.toml()).unwrap();
    let s = TempStudy::new();
    let members = s.read("members.tsv");
    for m in &reference.members {
        let csv = s.path(&format!("recordings/{}", m.recording));
        let pq = csv.with_extension("parquet");
        convert(&csv, &pq);
        std::fs::remove_file(&csv).unwrap();
        let _ = &members;
    }
    s.edit("members.tsv", |t| t.replace(".csv", ".parquet"));
    let loaded = study::load(&s.toml()).unwrap();
    for (a, b) in loaded.recordings.iter().zip(&reference.recordings) {
        assert_eq!(a.signals, b.signals);
        assert_eq!(a.n, b.n);
    }
}

#[test]
fn the_example_configs_parse() {
    for name in ["roles.toml", "peers.toml", "mapped.toml"] {
        let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("configs")
            .join(name);
        let text = std::fs::read_to_string(&path).unwrap();
        let config = nevermet::study::config::parse_config(&text, &path, "example")
            .unwrap_or_else(|p| panic!("{name}:\n{p}"));
        assert!(!config.bands.is_empty(), "{name}");
    }
}
