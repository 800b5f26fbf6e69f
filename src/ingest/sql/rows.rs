//! The rows, as the reader checks them: exposure rows (the reason a row cannot be used, the
//! fields of the usable ones) and people rows (the ID rules, dates, the first value kept).

use super::text::{Mapped, Rules, W};
use super::{Dialect, SqlRequest, TableSpec};

/// Exposure rows: trimmed values, the reason a row cannot be used, then the usable rows with
/// their fields checked.
pub(super) fn exposure_rows(w: &W, r: &Rules, req: &SqlRequest, ex: &Mapped) -> String {
    let mut s = String::new();
    s.push_str("-- Exposure rows, values trimmed (blank -> NULL).\n");
    s.push_str(&w.view(
        "hw_x0",
        &format!(
            "SELECT {ord} AS ord, {src} AS s, {tgt} AS t, {last} AS last_v, {first} AS first_v, \
             {set} AS setting_v, {min} AS minutes_v, {flag} AS flag_v, {raw} AS raw\nFROM {table}",
            ord = w.order(req.row_order.as_deref()),
            src = ex.field(w, "source_id"),
            tgt = ex.field(w, "target_id"),
            last = ex.field(w, "exposure_date"),
            first = ex.field(w, "first_exposure_date"),
            set = ex.field(w, "setting"),
            min = ex.field(w, "duration_min"),
            flag = ex.field(w, "transmission"),
            raw = ex.raw(w),
            table = req.exposures.name,
        ),
    ));
    s.push_str(
        "-- Why a row cannot form an exposure (source checked first), and the IDs in NFC.\n",
    );
    let code = |v: &str| r.is_code(w, v);
    // The row as read is kept only for the rows set aside (the text of every row cost memory
    // and time in the engine).
    s.push_str(&w.create(
        "hw_x1",
        &format!(
            "SELECT ord, s, t, last_v, first_v, setting_v, minutes_v, flag_v, s_id, t_id, reason_field, \
             reason, reason_code, CASE WHEN reason IS NOT NULL THEN raw END AS raw FROM (SELECT *, \
             CASE WHEN s IS NULL OR {sc} THEN 'source_id' WHEN t IS NULL OR {tc} THEN 'target_id' END AS reason_field, \
             CASE WHEN s IS NULL THEN 'missing_id' WHEN {sc} THEN 'missing_value_code' \
             WHEN t IS NULL THEN 'missing_id' WHEN {tc} THEN 'missing_value_code' \
             WHEN {sk} = {tk} THEN 'self_exposure' END AS reason, \
             CASE WHEN {sc} THEN s WHEN {tc} THEN t END AS reason_code\n\
             FROM (SELECT *, {sn} AS s_id, {tn} AS t_id FROM hw_x0) x) y",
            sc = code("s"),
            tc = code("t"),
            sk = r.key("s_id"),
            tk = r.key("t_id"),
            sn = w.nfc("s"),
            tn = w.nfc("t"),
        ),
    ));
    s.push_str(&w.keep("hw_x1"));
    // Field values of usable rows (codes -> NULL), then their states.
    let v = |c: &str| r.value(w, c);
    s.push_str("-- Usable rows: dates, minutes, settings and links checked.\n");
    s.push_str(&w.view(
        "hw_x2",
        &format!(
            "SELECT ord, s, t, s_id, t_id, {sk} AS s_key, {tk} AS t_key, lv, fv, sv, mv, xv, \
             {ls} AS l_state, {fs} AS f0_state, {ms} AS m_state, TRY_CAST(mv AS DOUBLE) AS mx\n\
             FROM (SELECT ord, s, t, s_id, t_id, {lv} AS lv, {fv} AS fv, {sv} AS sv, {mv} AS mv, \
             {xv} AS xv FROM hw_x1 WHERE reason IS NULL) u",
            sk = r.key("s_id"),
            tk = r.key("t_id"),
            lv = v("last_v"),
            fv = v("first_v"),
            sv = v("setting_v"),
            mv = v("minutes_v"),
            xv = v("flag_v"),
            ls = r.date_state(w, "lv"),
            fs = r.date_state(w, "fv"),
            ms = r.minutes_state("mv", "TRY_CAST(mv AS DOUBLE)"),
        ),
    ));
    let flag = "lower(xv)";
    s.push_str(&w.create(
        "hw_x3",
        &format!(
            "SELECT ord, s, t, s_id, t_id, s_key, t_key, lv, fv, sv, mv, xv, l_state, m_state, \
             CASE WHEN f0_state = 'ok' AND l_state = 'ok' AND substr(fv, 1, 10) > substr(lv, 1, 10) \
             THEN 'first_after_last_exposure' ELSE f0_state END AS f_state, \
             CASE WHEN l_state = 'ok' THEN substr(lv, 1, 10) END AS l_day, \
             CASE WHEN f0_state = 'ok' AND NOT (l_state = 'ok' AND substr(fv, 1, 10) > substr(lv, 1, 10)) \
             THEN substr(fv, 1, 10) END AS f_day, \
             CASE WHEN m_state = 'ok' THEN CAST(CAST(mx AS FLOAT) AS DOUBLE) END AS minutes, \
             sv AS setting_label, lower(sv) AS setting_key, \
             CASE WHEN xv IS NULL OR {flag} IN ('no', 'n', 'false', 'f', '0') THEN 0 \
             WHEN {flag} IN ('yes', 'y', 'true', 't', '1') THEN 1 ELSE 0 END AS link, \
             CASE WHEN xv IS NULL OR {flag} IN ('no', 'n', 'false', 'f', '0', 'yes', 'y', 'true', 't', '1') \
             THEN NULL ELSE 'unreadable_flag' END AS x_state\nFROM hw_x2"
        ),
    ));
    s.push_str(&w.keep("hw_x3"));
    let header = |f: &str| w.lit(&ex.header(f).unwrap_or_default());
    s.push_str("-- Field problems of the exposure rows (the row was still used).\n");
    let t = w.text();
    let none = format!("CAST(NULL AS {t}), CAST(NULL AS {t}), CAST(NULL AS BIGINT)");
    let mut parts = [
        format!(
            "SELECT 'exposures' AS role, ord, {} AS column_name, lv AS value, l_state AS kind, \
             CAST(NULL AS {t}) AS detail, CAST(NULL AS {t}) AS person, CAST(NULL AS BIGINT) AS first_ord \
             FROM hw_x3 WHERE l_state <> 'ok'",
            header("exposure_date")
        ),
        format!(
            "SELECT 'exposures', ord, {}, fv, f_state, CASE WHEN f_state = 'first_after_last_exposure' \
             THEN l_day END, CAST(NULL AS {t}), CAST(NULL AS BIGINT) FROM hw_x3 WHERE f_state <> 'ok'",
            header("first_exposure_date")
        ),
        format!(
            "SELECT 'exposures', ord, {}, mv, m_state, {none} FROM hw_x3 WHERE m_state <> 'ok'",
            header("duration_min")
        ),
        format!(
            "SELECT 'exposures', ord, {}, lower(xv), x_state, {none} FROM hw_x3 WHERE x_state IS NOT NULL",
            header("transmission")
        ),
    ];
    parts.iter_mut().for_each(|p| p.push('\n'));
    s.push_str(&w.create("hw_xproblems", &parts.join("UNION ALL\n")));
    s
}

/// People rows: the ID rules, the attribute values (dates checked), the first value kept and
/// later different values counted as conflicts. Returns the attribute names (canonical where
/// mapped) with their SQL column aliases.
pub(super) fn people_rows(
    w: &W,
    r: &Rules,
    req: &SqlRequest,
    spec: &TableSpec,
    pm: &Mapped,
) -> (String, Vec<(String, String)>) {
    let mut s = String::new();
    let id_col = pm.mapping.get("person_id").expect("required");
    // Attribute columns: every column but the ID (composite columns after the table's own).
    let n = pm.columns.len() + pm.mapping.joined.len();
    let mut attrs: Vec<(String, String, String, bool)> = Vec::new(); // (name, alias, header, date)
    for c in (0..n).filter(|&c| c != id_col) {
        let field = pm.mapping.field_of(c).map(str::to_string);
        let header = pm.mapping.column_name(&pm.columns, c).to_string();
        let name = field.clone().unwrap_or_else(|| header.clone());
        let date = matches!(field.as_deref(), Some("onset_date" | "report_date"));
        attrs.push((name, format!("a{}", attrs.len()), header, date));
    }
    let expr = |c: usize| -> String {
        match pm.columns.get(c) {
            Some(col) => w.trimmed(&w.ident(col)),
            None => pm.field(w, pm.mapping.field_of(c).unwrap_or_default()),
        }
    };
    let cols: Vec<String> = (0..n)
        .filter(|&c| c != id_col)
        .zip(&attrs)
        .map(|(c, (_, alias, _, _))| format!("{} AS {alias}_v", r.value(w, &expr(c))))
        .collect();
    s.push_str("-- People rows, values trimmed; a row without an ID is quarantined.\n");
    s.push_str(&w.create(
        "hw_p0",
        &format!(
            "SELECT {ord} AS ord, {id} AS p, {raw} AS raw{sep}{cols}\nFROM {table}",
            ord = w.order(req.row_order.as_deref()),
            id = pm.field(w, "person_id"),
            raw = pm.raw(w),
            sep = if cols.is_empty() { "" } else { ", " },
            cols = cols.join(", "),
            table = spec.name,
        ),
    ));
    let states: Vec<String> = attrs
        .iter()
        .map(|(_, a, _, date)| match date {
            true => format!(
                "{a}_v, {st} AS {a}_state, CASE WHEN {st} = 'ok' THEN substr({a}_v, 1, 10) END AS {a}",
                st = r.date_state(w, &format!("{a}_v"))
            ),
            false => format!("CAST(NULL AS {}) AS {a}_state, {a}_v AS {a}", w.text()),
        })
        .collect();
    s.push_str(&w.create(
        "hw_p1",
        &format!(
            "SELECT *, CASE WHEN p IS NULL THEN 'missing_id' WHEN {pc} THEN 'missing_value_code' END AS reason, \
             CASE WHEN {pc} THEN p END AS reason_code FROM hw_p0",
            pc = r.is_code(w, "p")
        ),
    ));
    s.push_str(&w.create(
        "hw_p2",
        &format!(
            "SELECT ord, p, id, {key} AS key{sep}{states}\nFROM (SELECT *, {nfc} AS id FROM hw_p1 WHERE reason IS NULL) u",
            key = r.key("id"),
            nfc = w.nfc("p"),
            sep = if states.is_empty() { "" } else { ", " },
            states = states.join(", "),
        ),
    ));
    s.push_str(&w.keep("hw_p2"));
    // The first value of each attribute per person, and the later values that differ.
    let kept: Vec<String> = attrs
        .iter()
        .map(|(_, a, _, _)| match w.d {
            Dialect::DuckDb => format!("arg_min({a}, ord) FILTER (WHERE {a} IS NOT NULL) AS {a}"),
            Dialect::Spark => format!("min_by({a}, ord) FILTER (WHERE {a} IS NOT NULL) AS {a}"),
        })
        .collect();
    s.push_str(&w.create(
        "hw_p",
        &format!(
            "SELECT key, min(ord) AS ord, {first_id} AS id{sep}{kept}\nFROM hw_p2 GROUP BY key",
            first_id = match w.d {
                Dialect::DuckDb => "arg_min(id, ord)",
                Dialect::Spark => "min_by(id, ord)",
            },
            sep = if kept.is_empty() { "" } else { ", " },
            kept = kept.join(", "),
        ),
    ));
    let mut problems: Vec<String> = Vec::new();
    for (_, a, header, date) in &attrs {
        let h = w.lit(header);
        if *date {
            problems.push(format!(
                "SELECT 'people' AS role, ord, {h} AS column_name, {a}_v AS value, {a}_state AS kind, \
                 CAST(NULL AS {t}) AS detail, CAST(NULL AS {t}) AS person, CAST(NULL AS BIGINT) AS first_ord \
                 FROM hw_p2 WHERE {a}_state <> 'ok'",
                t = w.text()
            ));
        }
        problems.push(format!(
            "SELECT 'people' AS role, x.ord AS ord, {h} AS column_name, x.{a} AS value, \
             'conflicting_value' AS kind, k.{a} AS detail, x.id AS person, k.ord AS first_ord \
             FROM hw_p2 x JOIN hw_p k ON x.key = k.key WHERE x.{a} IS NOT NULL AND x.{a} <> k.{a}"
        ));
    }
    if problems.is_empty() {
        problems.push(format!(
            "SELECT 'people' AS role, CAST(NULL AS BIGINT) AS ord, CAST(NULL AS {t}) AS column_name, \
             CAST(NULL AS {t}) AS value, CAST(NULL AS {t}) AS kind, CAST(NULL AS {t}) AS detail, \
             CAST(NULL AS {t}) AS person, CAST(NULL AS BIGINT) AS first_ord WHERE 1 = 0",
            t = w.text()
        ));
    }
    s.push_str("-- Field problems of the people rows.\n");
    s.push_str(&w.create("hw_pproblems", &problems.join("\nUNION ALL\n")));
    let names = attrs
        .into_iter()
        .map(|(name, alias, _, _)| (name, alias))
        .collect();
    (s, names)
}
