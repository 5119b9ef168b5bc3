//! Every output takes its columns and measures from the one registry (`model::columns`): what
//! each file holds is exactly what the registry says it carries, so that a column or measure
//! added there reaches every output, and one left out of the registry reaches none.

use std::collections::BTreeSet;

use benchgrade::model::columns::{self, Kind, Outputs};
use benchgrade::model::Measure;

use crate::harness::{project_root, Fixture};

fn graded() -> Fixture {
    let f = Fixture::new();
    let data = project_root().join("sample-data");
    let run = f.run(&["grade", data.to_str().unwrap(), "--out", "out", "--quiet"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    f
}

#[test]
fn results_files_carry_the_registry_columns_in_order() {
    let f = graded();
    let text = std::fs::read_to_string(f.path("out/results.csv")).unwrap();
    let header: Vec<&str> = text.lines().next().unwrap().split(',').collect();
    let registry: Vec<&str> = columns::carried_by(Outputs::CSV)
        .filter(|c| c.kind != Kind::Points)
        .map(|c| c.name)
        .collect();
    // the registry through `status`, the points, then the columns appended since (so that no
    // column a reader knows ever moves)
    let status = registry.iter().position(|c| *c == "status").unwrap() + 1;
    assert_eq!(&header[..status], &registry[..status]);
    let points = header.iter().filter(|h| h.starts_with("points_")).count();
    assert!(points > 0);
    assert!(header[status..status + points]
        .iter()
        .all(|h| h.starts_with("points_")));
    assert_eq!(&header[status + points..], &registry[status..]);
    let json: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(f.path("out/results.json")).unwrap())
            .unwrap();
    let record = json["records"][0].as_object().unwrap();
    let keys: Vec<&str> = record
        .keys()
        .map(String::as_str)
        .collect::<BTreeSet<_>>()
        .into_iter()
        .collect();
    let want: BTreeSet<&str> = columns::carried_by(Outputs::JSON).map(|c| c.name).collect();
    assert_eq!(keys, want.into_iter().collect::<Vec<_>>());
}

#[test]
fn statistics_and_comparisons_cover_the_registry_measures() {
    let f = graded();
    let read = |name: &str| -> BTreeSet<String> {
        let mut r = csv::Reader::from_path(f.path(&format!("out/{name}"))).unwrap();
        r.records()
            .map(|rec| rec.unwrap()[usize::from(name == "section-stats.csv")].to_string())
            .collect()
    };
    let summarised: BTreeSet<String> = Measure::summarised()
        .into_iter()
        .map(|m| m.key().to_string())
        .collect();
    assert_eq!(read("section-stats.csv"), summarised);
    let compared: BTreeSet<String> = Measure::compared()
        .into_iter()
        .map(|m| m.key().to_string())
        .collect();
    assert_eq!(read("section-comparison.csv"), compared);
}
