//! Real open contact networks: node and distinct-pair counts against the figures stated in each
//! data set's SOURCE.md under ../shared/data (cited per case). The NC-licensed sets are read in
//! place and skipped with a message when that folder is absent; the CC0 workplace-2013 copy in
//! tests/data always runs.

use crate::common;

use std::path::{Path, PathBuf};

use common::{assert_balanced, load, shared};

fn data(rel: &str) -> Option<PathBuf> {
    let p = shared()?.join("data").join(rel);
    if p.exists() {
        Some(p)
    } else {
        common::skip(&format!("{} not found", p.display()));
        None
    }
}

/// (file, people, distinct pairs, rows, quarantined rows, where the figures come from)
const SENSOR_SETS: [(&str, usize, usize, u64, u64, &str); 9] = [
    (
        "sp-ht09-conference-2009/ht2009_contact_list.dat.gz",
        113,
        2196,
        20818,
        0,
        "SOURCE.md: 113 IDs, 20,818 rows, 2,196 distinct pairs",
    ),
    (
        "sp-sfhh-conference-2009/SFHH_tij.dat.gz",
        403,
        9565,
        70261,
        0,
        "SOURCE.md: 403 IDs, 70,261 rows, 9,565 distinct pairs",
    ),
    (
        "sp-primary-school-2009/primaryschool.csv.gz",
        242,
        8317,
        125773,
        0,
        "SOURCE.md: 242 IDs, 125,773 rows, 8,317 distinct pairs",
    ),
    (
        "sp-hospital-lyon-2010/hospital_lyon_contacts.dat.gz",
        75,
        1139,
        32424,
        0,
        "SOURCE.md: 75 IDs (paper: 46 staff + 29 patients), 1,139 pairs",
    ),
    (
        "sp-highschool-2013/HighSchool2013_proximity_net.csv.gz",
        327,
        5818,
        188508,
        0,
        "SOURCE.md: 327 students, 188,508 rows, 5,818 links",
    ),
    (
        "sp-workplace-2015/workplace_InVS15_tij.dat.gz",
        217,
        4274,
        78249,
        0,
        "SOURCE.md: 217 people with contacts, 78,249 rows, 4,274 links",
    ),
    // One self-contact row (43 43) is quarantined, as SOURCE.md's "Quirks" says.
    (
        "sp-highschool-2011/highschool_2011.csv.gz",
        126,
        1709,
        28561,
        1,
        "SOURCE.md: 126 nodes, 28,561 rows, 1,709 distinct pairs, one self-contact",
    ),
    (
        "sp-highschool-2012/highschool_2012.csv.gz",
        180,
        2220,
        45047,
        0,
        "SOURCE.md: 180 nodes, 45,047 rows, 2,220 distinct pairs",
    ),
    (
        "sp-workplace-2013/tij_InVS.dat.gz",
        92,
        755,
        9827,
        0,
        "SOURCE.md: 92 people, 9,827 rows, 755 links (space-separated, CRLF)",
    ),
];

#[test]
fn sensor_networks_match_their_stated_counts() {
    for (rel, people, pairs, rows, quarantined, source) in SENSOR_SETS {
        let Some(p) = data(rel) else { continue };
        // Headerless `t i j ...`: positional mapping, as a user would give it.
        let d = load(&[&p], &["source_id=2", "target_id=3"]);
        assert_eq!(d.people(), people, "{rel}: people ({source})");
        assert_eq!(d.edges.len(), pairs, "{rel}: pairs ({source})");
        assert_eq!(d.ledger.exposures.read, rows, "{rel}: rows ({source})");
        assert_eq!(
            d.ledger.exposures.quarantined, quarantined,
            "{rel}: quarantined ({source})"
        );
        assert_balanced(&d);
    }
}

#[test]
fn bundled_cc0_workplace_copy_always_runs() {
    // tests/data/sp-workplace-2013 (CC0; see ATTRIBUTION.md there): 92 people, 755 pairs.
    let p =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/sp-workplace-2013/tij_InVS.dat.gz");
    let d = load(&[&p], &["source_id=2", "target_id=3"]);
    assert_eq!(
        (d.people(), d.edges.len(), d.ledger.exposures.read),
        (92, 755, 9827)
    );
}

#[test]
fn village_network_with_its_own_header() {
    // sp-malawi-village-2019/SOURCE.md: header ",contact_time,day,id1,id2"; 86 IDs, 347 distinct
    // pairs, 2 connected components (84 + 2 people). id1/id2 map by the default synonyms.
    let Some(p) = data("sp-malawi-village-2019/tnet_malawi_pilot.csv.gz") else {
        return;
    };
    let d = load(&[&p], &[]);
    assert_eq!((d.people(), d.edges.len()), (86, 347));
    let (_, sizes) = hubwatch::graph::components(&d.graph);
    let mut sizes = sizes;
    sizes.sort_unstable();
    assert_eq!(sizes, [2, 84]);
}

#[test]
fn household_study_people_and_contacts_from_a_folder() {
    // sa-household-sarscov2-2020/SOURCE.md: 340 people in 88 households, 542 distinct contact
    // pairs, none between households (so at least 88 clusters; households without any
    // recorded pair add more).
    let Some(dir) = data("sa-household-sarscov2-2020") else {
        return;
    };
    let d = load(&[&dir], &[]);
    assert_eq!(d.people(), 340);
    assert_eq!(d.implied(), 0, "every contact is in the metadata table");
    assert_eq!(d.edges.len(), 542);
    assert_eq!(d.ledger.exposures.read, 140_542);
    let (_, sizes) = hubwatch::graph::components(&d.graph);
    assert!(
        sizes.iter().all(|&s| s <= 29),
        "no cluster spans households"
    );
}

#[test]
fn transmission_pairs_line_list() {
    // covid19-china-transmission-pairs-2020/SOURCE.md: 1,407 pairs, 2,050 distinct case IDs,
    // 643 separate transmission trees. Columns infector_id / infectee_id.
    let Some(p) = data("covid19-china-transmission-pairs-2020/TableS1_1407TransPairs.csv") else {
        return;
    };
    let d = load(&[&p], &["source_id=infector_id", "target_id=infectee_id"]);
    assert_eq!(d.ledger.exposures.read, 1407);
    assert_eq!(d.people(), 2050);
    assert_eq!(d.edges.len(), 1407);
    assert_eq!(hubwatch::graph::components(&d.graph).1.len(), 643);
    // The statistics take their components from the search for articulation points.
    let (_, (_, sizes)) = hubwatch::metrics::structure::cut_points_and_components(&d.graph);
    assert_eq!(sizes.len(), 643);
    assert_eq!(sizes.iter().max(), Some(&24));
}

#[test]
fn published_statistics_of_the_simple_aggregated_graphs() {
    use hubwatch::metrics::{degree, mixing};
    // sp-highschool-2011/SOURCE.md and sp-highschool-2012/SOURCE.md: the simple aggregated graph
    // has r = 0.083 (1,709 pairs) and r = 0.046 (2,220 pairs); stated to three decimals.
    for (rel, want) in [
        ("sp-highschool-2011/highschool_2011.csv.gz", 0.083),
        ("sp-highschool-2012/highschool_2012.csv.gz", 0.046),
    ] {
        let Some(p) = data(rel) else { continue };
        let d = load(&[&p], &["source_id=2", "target_id=3"]);
        let deg = degree::degrees(&d.graph);
        let r = mixing::assortativity(&d.edges.a, &d.edges.b, &deg).unwrap();
        assert!(
            (r - want).abs() < 0.0005,
            "{rel}: r = {r}, SOURCE.md says {want}"
        );
    }
    // covid19-china-transmission-pairs-2020/SOURCE.md: the largest transmission tree has 24 cases.
    if let Some(p) = data("covid19-china-transmission-pairs-2020/TableS1_1407TransPairs.csv") {
        let d = load(&[&p], &["source_id=infector_id", "target_id=infectee_id"]);
        let (_, sizes) = hubwatch::graph::components(&d.graph);
        assert_eq!(sizes.iter().max(), Some(&24));
    }
}
