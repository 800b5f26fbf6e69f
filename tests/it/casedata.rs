//! Case statistics on a crafted export whose expected counts are worked out by hand from the
//! definitions in src/metrics/casedata.rs (stated in the README); and on synth exports against
//! the links the generator states it planted.

use crate::common;

use common::load;
use hubwatch::analysis::casedata::case_stats;

#[test]
fn attack_rate_offspring_and_serial_interval_by_hand() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("people.csv");
    let e = dir.path().join("exposures.csv");
    std::fs::write(
        &p,
        "person_id,role,onset_date,status,followup_status\n\
         C1,case,2024-03-05,,\nC2,case,2024-03-10,,\nC3,Case,2024-03-05,,\n\
         K1,contact,,,reached\nK2,contact,,,unreachable\nK3,contact,,immune,\n",
    )
    .unwrap();
    std::fs::write(
        &e,
        "source_id,target_id,setting,transmission\n\
         C1,C2,household,yes\nC1,C3,household,no\nC1,K1,household,no\nC1,K2,workplace,\n\
         C2,K3,school,no\nK1,C2,school,maybe\n",
    )
    .unwrap();
    let d = load(&[&p, &e], &[]);
    let c = case_stats(&d);
    assert_eq!(c.cases, 3);
    // C2 is C1's secondary case (onset later); C1-C3 share an onset: co-primary, left out.
    // At risk: C2 and K1; K2 is lost to follow-up and K3 immune: both left out.
    assert_eq!((c.sar.x, c.sar.n), (1, 2));
    assert_eq!((c.lost, c.immune, c.co_primary_pairs), (1, 1, 1));
    let by: std::collections::HashMap<&str, (u64, u64)> = c
        .sar_by_setting
        .iter()
        .map(|(l, p)| (l.as_str(), (p.x, p.n)))
        .collect();
    assert_eq!(by["household"], (1, 2));
    assert_eq!(by["school"], (0, 1), "K1 via C2 at school; K3 immune");
    assert_eq!(
        by["workplace"],
        (0, 0),
        "only K2, who was lost to follow-up"
    );
    assert!(c
        .sar_by_setting
        .iter()
        .find(|(l, _)| l == "workplace")
        .unwrap()
        .1
        .p
        .is_err());
    // One link C1 -> C2: offspring over the three cases is [1, 0, 0]; serial interval 5 days.
    assert_eq!(c.links, 1);
    let off = &c.offspring.as_ref().unwrap().sample;
    assert_eq!(off.n(), 3);
    assert!((off.mean().unwrap() - 1.0 / 3.0).abs() < 1e-15);
    assert_eq!((c.serial.n, c.serial.mean), (1, Ok(5.0)));
    assert!(c.serial.sd.is_err());
    // "maybe" is not yes or no: a field problem, read as no.
    assert!(d
        .ledger
        .problems
        .iter()
        .any(|p| p.kind.code() == "unreadable_flag" && p.line == 7));
}

#[test]
fn synth_links_are_found() {
    let dir = tempfile::tempdir().unwrap();
    let end = hubwatch::ingest::dates::parse_iso("2026-11-27").unwrap();
    let m = hubwatch::synth::generate(
        dir.path(),
        &hubwatch::synth::SynthOptions::new(4000, 5, end),
    )
    .unwrap();
    let d = load(&[dir.path()], &[]);
    let c = case_stats(&d);
    assert_eq!(c.links, m.links, "every planted link is read");
    assert_eq!(c.cases as u64, m.cases);
    // Each infected person has exactly one infector: offspring sum = links.
    let off = c.offspring.unwrap().sample;
    assert!((off.mean().unwrap() * off.n() as f64 - m.links as f64).abs() < 1e-9);
    // Infection follows exposure: every serial interval is positive in the generator.
    assert_eq!(c.serial.n as u64, m.links);
    assert_eq!(c.serial.share_negative, Ok(0.0));
}

#[test]
fn no_roles_means_case_statistics_say_why() {
    let dir = tempfile::tempdir().unwrap();
    let e = dir.path().join("e.csv");
    std::fs::write(&e, "source_id,target_id\nA,B\n").unwrap();
    let c = case_stats(&load(&[&e], &[]));
    assert_eq!(
        c.missing,
        Some("the people table has no role column (case / contact)")
    );
    assert!(c.sar.p.is_err() && c.offspring.is_none());
}

/// More settings than fit one byte, or one 64-bit word, per person (the case statistics keep
/// each person's settings as bits, a byte per 8): the attack rate per setting is still each setting's own. Counted by hand
/// from the definitions of `analysis::casedata` (the secondary attack rate among traced
/// contacts: common practice, no source).
#[test]
fn attack_rate_by_setting_with_many_settings() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("people.csv");
    let e = dir.path().join("exposures.csv");
    let mut people =
        String::from("person_id,role,onset_date,followup_status\nC1,case,2024-03-05,\n");
    people.push_str("C2,case,2024-03-09,\n");
    let mut exposures = String::from("source_id,target_id,setting\n");
    for i in 0..70 {
        let lost = if i == 5 { "unreachable" } else { "" };
        people.push_str(&format!("K{i},contact,,{lost}\n"));
        exposures.push_str(&format!("C1,K{i},s{i}\n"));
    }
    exposures.push_str("C1,C2,s69\nC2,C1,s64\n");
    std::fs::write(&p, people).unwrap();
    std::fs::write(&e, exposures).unwrap();
    let d = load(&[&p, &e], &[]);
    let c = case_stats(&d);
    // At risk overall: K0..K69 but K5 (lost), and C2, C1's secondary case.
    assert_eq!((c.sar.x, c.sar.n, c.lost), (1, 70, 1));
    let by: std::collections::HashMap<&str, (u64, u64)> = c
        .sar_by_setting
        .iter()
        .map(|(l, p)| (l.as_str(), (p.x, p.n)))
        .collect();
    assert_eq!(by.len(), 70);
    for i in 0..70 {
        let want = match i {
            5 => (0, 0),
            64 | 69 => (1, 2),
            _ => (0, 1),
        };
        assert_eq!(by[format!("s{i}").as_str()], want, "setting s{i}");
    }
}
