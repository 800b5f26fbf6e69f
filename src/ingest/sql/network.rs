//! From rows to the network: node numbers as a file gives them, the rows on those numbers and
//! the view, the pairs and their parts, the degree tables, and the ledger.

use super::text::W;
use super::{Dialect, SqlRequest};

/// People first (in the order of their first row), then people known only from exposures (in
/// the order of their first mention, source before target): the node numbers a file gives.
pub(super) fn nodes(w: &W, attrs: &[(String, String)]) -> String {
    let mut s = String::new();
    s.push_str("-- Node numbers: the people table first, then IDs first seen in exposures.\n");
    let first_of = match w.d {
        Dialect::DuckDb => "arg_min(id, ord * 2 + side)",
        Dialect::Spark => "min_by(id, struct(ord, side))",
    };
    let min_pos = match w.d {
        Dialect::DuckDb => "min(ord * 2 + side)",
        Dialect::Spark => "min(struct(ord, side))",
    };
    s.push_str(&w.create(
        "hw_implied",
        &format!(
            "SELECT key, {first_of} AS id, {min_pos} AS pos FROM (\
             SELECT s_key AS key, s_id AS id, ord, 0 AS side FROM hw_x3 \
             UNION ALL SELECT t_key, t_id, ord, 1 FROM hw_x3) o \
             WHERE key NOT IN (SELECT key FROM hw_p) GROUP BY key"
        ),
    ));
    let attr_cols: Vec<String> = attrs.iter().map(|(_, a)| format!(", {a}")).collect();
    let null_cols: Vec<String> = attrs
        .iter()
        .map(|(_, a)| format!(", CAST(NULL AS {}) AS {a}", w.text()))
        .collect();
    s.push_str(&w.create(
        "hw_node_keys",
        &format!(
            "SELECT CAST(row_number() OVER (ORDER BY ord) - 1 AS BIGINT) AS node, key, id, TRUE AS listed{a} FROM hw_p\n\
             UNION ALL\n\
             SELECT CAST((SELECT count(*) FROM hw_p) + row_number() OVER (ORDER BY pos) - 1 AS BIGINT), key, id, FALSE{n} FROM hw_implied",
            a = attr_cols.concat(),
            n = null_cols.concat(),
        ),
    ));
    s.push_str(&w.keep("hw_node_keys"));
    s
}

/// Rows on node numbers, the view, then the pairs and their parts.
pub(super) fn pairs(w: &W, req: &SqlRequest) -> String {
    let mut s = String::new();
    let v = &req.view;
    let mut cond: Vec<String> = Vec::new();
    let lits = |names: &[String]| {
        names
            .iter()
            .map(|n| w.lit(&n.to_lowercase()))
            .collect::<Vec<_>>()
            .join(", ")
    };
    if !v.settings.is_empty() {
        cond.push(format!(
            "coalesce(setting_key IN ({}), FALSE)",
            lits(&v.settings)
        ));
    }
    if !v.exclude_settings.is_empty() {
        cond.push(format!(
            "NOT coalesce(setting_key IN ({}), FALSE)",
            lits(&v.exclude_settings)
        ));
    }
    let day = "coalesce(l_day, f_day)";
    if let Some(f) = v.from {
        cond.push(format!("{day} >= {}", w.lit(&crate::ingest::dates::iso(f))));
    }
    if let Some(t) = v.to {
        cond.push(format!("{day} <= {}", w.lit(&crate::ingest::dates::iso(t))));
    }
    let in_view = match cond.is_empty() {
        true => "TRUE".to_string(),
        false => format!("coalesce({}, FALSE)", cond.join(" AND ")),
    };
    s.push_str("-- Settings: numbered in the order first seen, compared without case.\n");
    let first_label = match w.d {
        Dialect::DuckDb => "arg_min(setting_label, ord)",
        Dialect::Spark => "min_by(setting_label, ord)",
    };
    s.push_str(&w.create(
        "hw_settings",
        &format!(
            "SELECT CAST(row_number() OVER (ORDER BY first_ord) AS INT) AS code, label, key FROM (\
             SELECT setting_key AS key, {first_label} AS label, min(ord) AS first_ord FROM hw_x3 \
             WHERE setting_key IS NOT NULL GROUP BY setting_key) g"
        ),
    ));
    s.push_str("-- Usable rows on node numbers; in_view: the row is in the network asked for.\n");
    s.push_str(&w.create(
        "hw_rows",
        &format!(
            "SELECT least(ns.node, nt.node) AS a, greatest(ns.node, nt.node) AS b, ns.node < nt.node AS src_is_a, \
             x.l_day, x.f_day, x.minutes, coalesce(st.code, 0) AS setting, x.link, {in_view} AS in_view\n\
             FROM hw_x3 x JOIN hw_node_keys ns ON x.s_key = ns.key JOIN hw_node_keys nt ON x.t_key = nt.key \
             LEFT JOIN hw_settings st ON x.setting_key = st.key"
        ),
    ));
    s.push_str(&w.keep("hw_rows"));
    s.push_str("-- Contact pairs: unordered, the rows merged.\n");
    s.push_str(&w.create(
        "hw_pairs",
        "SELECT a, b, count(*) AS rows, CAST(sum(CASE WHEN src_is_a THEN 1 ELSE 0 END) AS BIGINT) AS a_named_b, \
         min(least(coalesce(f_day, l_day), coalesce(l_day, f_day))) AS first_day, max(l_day) AS last_day, \
         sum(minutes) AS minutes, \
         CAST(sum(CASE WHEN link = 1 AND src_is_a THEN 1 ELSE 0 END) AS BIGINT) AS links_ab, \
         CAST(sum(CASE WHEN link = 1 AND NOT src_is_a THEN 1 ELSE 0 END) AS BIGINT) AS links_ba\n\
         FROM hw_rows WHERE in_view GROUP BY a, b",
    ));
    s.push_str(&w.keep("hw_pairs"));
    s.push_str(&w.create(
        "hw_pair_settings",
        "SELECT DISTINCT a, b, setting AS code FROM hw_rows WHERE in_view AND setting > 0",
    ));
    s.push_str("-- The distinct date spans of pairs that have more than one.\n");
    s.push_str(&w.create(
        "hw_spans",
        "SELECT a, b, span_first, span_last FROM (\
         SELECT a, b, span_first, span_last, count(*) OVER (PARTITION BY a, b) AS n FROM (\
         SELECT DISTINCT a, b, least(coalesce(f_day, l_day), coalesce(l_day, f_day)) AS span_first, \
         greatest(coalesce(f_day, l_day), coalesce(l_day, f_day)) AS span_last \
         FROM hw_rows WHERE in_view AND coalesce(f_day, l_day) IS NOT NULL) d) m WHERE n > 1",
    ));
    s.push_str(&w.create(
        "hw_days",
        "SELECT coalesce(l_day, f_day) AS day, setting, count(*) AS rows FROM hw_rows \
         WHERE in_view AND coalesce(l_day, f_day) IS NOT NULL GROUP BY coalesce(l_day, f_day), setting",
    ));
    s
}

/// Degrees, the joint degree counts of the pairs' ends and each person's sum of contacts'
/// degrees (the tables the degree statistics need when the pairs do not fit in memory).
pub(super) fn degrees(w: &W, attrs: &[(String, String)]) -> String {
    let mut s = String::new();
    s.push_str("-- Degrees (people without contacts: 0).\n");
    s.push_str(&w.create(
        "hw_node_degree",
        "SELECT n.node, coalesce(d.k, 0) AS k FROM hw_node_keys n LEFT JOIN (\
         SELECT node, count(*) AS k FROM (SELECT a AS node FROM hw_pairs UNION ALL SELECT b FROM hw_pairs) e \
         GROUP BY node) d ON n.node = d.node",
    ));
    s.push_str(&w.keep("hw_node_degree"));
    let named: Vec<String> = attrs
        .iter()
        .map(|(name, a)| format!(", n.{a} AS {}", w.ident(&format!("attr:{name}"))))
        .collect();
    s.push_str(&w.create(
        "hw_nodes",
        &format!(
            "SELECT n.node, n.id, n.listed, d.k{} FROM hw_node_keys n JOIN hw_node_degree d ON n.node = d.node",
            named.concat()
        ),
    ));
    s.push_str(&w.create(
        "hw_degrees",
        "SELECT k, count(*) AS people FROM hw_node_degree GROUP BY k",
    ));
    s.push_str(
        "-- e(j, k): ends of pairs by the degrees at both ends (each pair counted both ways).\n",
    );
    s.push_str(&w.create(
        "hw_joint",
        "SELECT j, k, count(*) AS ends FROM (\
         SELECT da.k AS j, db.k AS k FROM hw_pairs p JOIN hw_node_degree da ON p.a = da.node JOIN hw_node_degree db ON p.b = db.node \
         UNION ALL \
         SELECT db.k, da.k FROM hw_pairs p JOIN hw_node_degree da ON p.a = da.node JOIN hw_node_degree db ON p.b = db.node) e \
         GROUP BY j, k",
    ));
    s.push_str(
        "-- Each person's degree and the sum of their contacts' degrees, counted by (k, sum).\n",
    );
    s.push_str(&w.create(
        "hw_neighbour_sums",
        "SELECT k, total, count(*) AS people FROM (\
         SELECT e.node, d.k, CAST(sum(o.k) AS BIGINT) AS total FROM (\
         SELECT a AS node, b AS other FROM hw_pairs UNION ALL SELECT b, a FROM hw_pairs) e \
         JOIN hw_node_degree d ON e.node = d.node JOIN hw_node_degree o ON e.other = o.node \
         GROUP BY e.node, d.k) t GROUP BY k, total",
    ));
    s
}

/// The ledger: counts per table and reason, and the quarantined rows and field problems.
pub(super) fn ledger(w: &W, has_people: bool) -> String {
    let mut s = String::new();
    s.push_str("-- Quarantined rows, with the reason, the field and the code as written.\n");
    let mut q = vec![
        "SELECT 'exposures' AS role, ord, reason, reason_field AS field, reason_code AS code, raw FROM hw_x1 WHERE reason IS NOT NULL"
            .to_string(),
    ];
    if has_people {
        q.push("SELECT 'people', ord, reason, 'person_id', reason_code, raw FROM hw_p1 WHERE reason IS NOT NULL".into());
    }
    s.push_str(&w.create("hw_quarantine", &q.join("\nUNION ALL\n")));
    let mut p = vec!["SELECT * FROM hw_xproblems".to_string()];
    if has_people {
        p.push("SELECT * FROM hw_pproblems".into());
    }
    s.push_str(&w.create("hw_problems", &p.join("\nUNION ALL\n")));
    s.push_str("-- Row counts: read = used + merged + quarantined for each table.\n");
    let mut l = vec![
        "SELECT 'exposures' AS role, 'read' AS item, CAST(count(*) AS BIGINT) AS n FROM hw_x1".to_string(),
        "SELECT 'exposures', 'used', CAST(count(*) AS BIGINT) FROM (SELECT DISTINCT a, b FROM hw_rows) d".into(),
        "SELECT 'exposures', 'merged', CAST((SELECT count(*) FROM hw_rows) - (SELECT count(*) FROM (SELECT DISTINCT a, b FROM hw_rows) d) AS BIGINT)".into(),
        "SELECT 'exposures', 'quarantined', CAST(count(*) AS BIGINT) FROM hw_x1 WHERE reason IS NOT NULL".into(),
        "SELECT 'exposures', 'ids_normalised', CAST(coalesce(sum(CASE WHEN s_id <> s THEN 1 ELSE 0 END + CASE WHEN t_id <> t THEN 1 ELSE 0 END), 0) AS BIGINT) FROM hw_x3".into(),
    ];
    if has_people {
        l.extend([
            "SELECT 'people', 'read', CAST(count(*) AS BIGINT) FROM hw_p1".to_string(),
            "SELECT 'people', 'used', CAST(count(*) AS BIGINT) FROM hw_p".into(),
            "SELECT 'people', 'merged', CAST((SELECT count(*) FROM hw_p2) - (SELECT count(*) FROM hw_p) AS BIGINT)".into(),
            "SELECT 'people', 'quarantined', CAST(count(*) AS BIGINT) FROM hw_p1 WHERE reason IS NOT NULL".into(),
            "SELECT 'people', 'ids_normalised', CAST(coalesce(sum(CASE WHEN id <> p THEN 1 ELSE 0 END), 0) AS BIGINT) FROM hw_p2".into(),
        ]);
    }
    l.push("SELECT role, concat('quarantined:', reason), CAST(count(*) AS BIGINT) FROM hw_quarantine GROUP BY role, reason".into());
    l.push("SELECT role, concat('problem:', kind), CAST(count(*) AS BIGINT) FROM hw_problems GROUP BY role, kind".into());
    s.push_str(&w.create("hw_ledger", &l.join("\nUNION ALL\n")));
    s
}
