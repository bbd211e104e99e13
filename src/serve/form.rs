//! The spec as a form: every setting of the TOML text as a field with a path, and edits to a
//! field applied back to the text with `toml_edit`, so comments, order and layout of the rest
//! of the file stay as they were. The form is read off the text each time; the text is the one
//! state.

use serde::{Deserialize, Serialize};
use std::ops::Range;
use toml_edit::{Document, DocumentMut, InlineTable, Item, Table, Value};

/// One step of a path into the spec: a key, or a row of an array of tables.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
#[serde(untagged)]
pub enum Seg {
    Index(usize),
    Key(String),
}

/// A field's place in the spec, e.g. `["run", 0, "targets", "I-"]`.
pub type Path = Vec<Seg>;

/// What a field holds, as the form shows it.
#[derive(Debug, Clone, PartialEq)]
pub enum Shown {
    /// A quantity string such as "50.0 mL": the number and the unit as typed.
    Quantity {
        number: String,
        unit: String,
    },
    /// Any other string.
    Text(String),
    /// An integer or a float, as written.
    Number(String),
    Bool(bool),
    /// Anything else (a list, a nested table) as its TOML literal.
    Literal(String),
}

impl Shown {
    fn of(v: &Value) -> Shown {
        match v {
            Value::String(s) => split_quantity(s.value()).map_or_else(
                || Shown::Text(s.value().to_string()),
                |(number, unit)| Shown::Quantity { number, unit },
            ),
            Value::Integer(_) | Value::Float(_) => Shown::Number(literal(v)),
            Value::Boolean(b) => Shown::Bool(*b.value()),
            _ => Shown::Literal(literal(v)),
        }
    }
}

/// A value's TOML literal without its comments or spacing.
fn literal(v: &Value) -> String {
    let mut v = v.clone();
    v.decor_mut().clear();
    v.to_string().trim().to_string()
}

/// "50.0 mL" → ("50.0", "mL"); "1 %" → ("1", "%"). None for text that does not start with a
/// number followed by a space and a unit.
pub fn split_quantity(s: &str) -> Option<(String, String)> {
    let (number, unit) = s.trim().split_once(' ')?;
    let unit = unit.trim();
    let numeric = !number.is_empty()
        && number.chars().any(|c| c.is_ascii_digit())
        && number
            .chars()
            .all(|c| c.is_ascii_digit() || matches!(c, '.' | ',' | '-' | '+' | 'e' | 'E'));
    (numeric && !unit.is_empty()).then(|| (number.to_string(), unit.to_string()))
}

/// One field of the form.
#[derive(Debug, Clone, PartialEq)]
pub struct Field {
    pub path: Path,
    /// The key as the form labels it (`targets · I-` inside a row).
    pub label: String,
    pub shown: Shown,
    /// The comment written after the value in the spec, shown as the field's hint.
    pub hint: Option<String>,
    /// Where the value stands in the text (bytes), to place a located message.
    pub span: Range<usize>,
}

/// A table of the spec such as `[plan]`: its fields.
#[derive(Debug, Clone, PartialEq)]
pub struct Group {
    pub name: String,
    pub path: Path,
    pub fields: Vec<Field>,
    pub span: Range<usize>,
}

/// An array of tables such as `[[run]]`: one row per table, one column per key any row has.
#[derive(Debug, Clone, PartialEq)]
pub struct Grid {
    pub name: String,
    pub path: Path,
    /// Column keys relative to a row (`["targets", "I-"]`), in the order they first appear.
    pub columns: Vec<Path>,
    pub rows: Vec<Row>,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub span: Range<usize>,
    /// One cell per column; None where the row does not set that key.
    pub cells: Vec<Option<Field>>,
}

/// The spec as the form shows it, in the order of the file.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Form {
    pub groups: Vec<Group>,
    pub grids: Vec<Grid>,
    /// Tables and grids in file order: (is_grid, index).
    pub order: Vec<(bool, usize)>,
}

fn key_path(base: &Path, key: &str) -> Path {
    let mut p = base.clone();
    p.push(Seg::Key(key.to_string()));
    p
}

fn comment(v: &Value, src: &str) -> Option<String> {
    let raw = v.decor().suffix()?;
    let c = match raw.as_str() {
        Some(c) => c,
        None => src.get(raw.span()?)?,
    }
    .trim();
    let c = c.strip_prefix('#')?.trim();
    (!c.is_empty()).then(|| c.to_string())
}

/// A value's fields: an inline table of plain values (`targets = {...}`) or a list of
/// quantities (`window = ["15 s", "10 min"]`) gives one field per entry, anything else one.
fn value_fields(src: &str, path: Path, label: &str, v: &Value, out: &mut Vec<Field>) {
    let span = v.span().unwrap_or(0..0);
    match v {
        Value::InlineTable(t) if t.iter().all(|(_, x)| is_plain(x)) && !t.is_empty() => {
            for (k, x) in t.iter() {
                value_fields(src, key_path(&path, k), &format!("{label} · {k}"), x, out);
            }
            if let Some(h) = comment(v, src) {
                if let Some(last) = out.last_mut() {
                    last.hint.get_or_insert(h);
                }
            }
        }
        Value::Array(a)
            if !a.is_empty()
                && a.len() <= 4
                && a.iter().all(
                    |x| matches!(x, Value::String(s) if split_quantity(s.value()).is_some()),
                ) =>
        {
            let first = out.len();
            for (i, x) in a.iter().enumerate() {
                let mut p = path.clone();
                p.push(Seg::Index(i));
                value_fields(src, p, &format!("{label} {}", i + 1), x, out);
            }
            if let (Some(h), Some(f)) = (comment(v, src), out.get_mut(first)) {
                f.hint = Some(h);
            }
        }
        _ => out.push(Field {
            path,
            label: label.to_string(),
            shown: Shown::of(v),
            hint: comment(v, src),
            span,
        }),
    }
}

fn is_plain(v: &Value) -> bool {
    matches!(
        v,
        Value::String(_) | Value::Integer(_) | Value::Float(_) | Value::Boolean(_)
    )
}

/// A table's fields; its sub-tables and arrays of tables go to `form` as groups and grids.
fn table_fields(src: &str, t: &Table, path: &Path, form: &mut Form, name: &str) -> Vec<Field> {
    let mut fields = Vec::new();
    for (k, item) in t.iter() {
        let p = key_path(path, k);
        match item {
            Item::Value(v) => value_fields(src, p, k, v, &mut fields),
            Item::Table(sub) => add_group(src, sub, p, &format!("{name}.{k}"), form),
            Item::ArrayOfTables(a) => add_grid(src, a, p, &format!("{name}.{k}"), form),
            Item::None => {}
        }
    }
    fields
}

fn add_group(src: &str, t: &Table, path: Path, name: &str, form: &mut Form) {
    let index = form.groups.len();
    form.groups.push(Group {
        name: name.to_string(),
        path: path.clone(),
        fields: Vec::new(),
        span: t.span().unwrap_or(0..0),
    });
    form.order.push((false, index));
    let fields = table_fields(src, t, &path, form, name);
    form.groups[index].fields = fields;
    if form.groups[index].fields.is_empty() && t.is_implicit() {
        form.groups.remove(index);
        form.order.retain(|o| *o != (false, index));
    }
}

fn add_grid(src: &str, a: &toml_edit::ArrayOfTables, path: Path, name: &str, form: &mut Form) {
    let mut columns: Vec<Path> = Vec::new();
    let mut rows = Vec::new();
    for (i, t) in a.iter().enumerate() {
        let mut row_path = path.clone();
        row_path.push(Seg::Index(i));
        let mut sub = Form::default();
        let fields = table_fields(src, t, &row_path, &mut sub, &format!("{name} {}", i + 1));
        let mut cells: Vec<(Path, Field)> = Vec::new();
        for f in fields {
            let rel: Path = f.path[row_path.len()..].to_vec();
            if !columns.contains(&rel) {
                columns.push(rel.clone());
            }
            cells.push((rel, f));
        }
        rows.push((t.span().unwrap_or(0..0), cells));
    }
    let rows = rows
        .into_iter()
        .map(|(span, cells)| Row {
            span,
            cells: columns
                .iter()
                .map(|c| cells.iter().find(|(r, _)| r == c).map(|(_, f)| f.clone()))
                .collect(),
        })
        .collect();
    form.order.push((true, form.grids.len()));
    form.grids.push(Grid {
        name: name.to_string(),
        path,
        columns,
        rows,
    });
}

/// Read the form off a spec's text; Err with the TOML error's message when it does not parse.
pub fn read(text: &str) -> Result<Form, String> {
    let doc = Document::parse(text).map_err(|e| e.message().to_string())?;
    let mut form = Form::default();
    let root = doc.as_table();
    let top: Vec<Field> = root
        .iter()
        .filter_map(|(k, i)| i.as_value().map(|v| (k, v)))
        .flat_map(|(k, v)| {
            let mut out = Vec::new();
            value_fields(text, vec![Seg::Key(k.to_string())], k, v, &mut out);
            out
        })
        .collect();
    if !top.is_empty() {
        form.order.push((false, 0));
        form.groups.push(Group {
            name: "top".into(),
            path: Vec::new(),
            fields: top,
            span: 0..0,
        });
    }
    for (k, item) in root.iter() {
        let p = vec![Seg::Key(k.to_string())];
        match item {
            Item::Table(t) => add_group(text, t, p, k, &mut form),
            Item::ArrayOfTables(a) => add_grid(text, a, p, k, &mut form),
            _ => {}
        }
    }
    Ok(form)
}

impl Form {
    /// The field whose value holds byte `at`, else the row or table that does: the place a
    /// located message belongs beside.
    pub fn locate(&self, at: Range<usize>) -> Option<Path> {
        let inside = |s: &Range<usize>| s.start <= at.start && at.start < s.end.max(s.start + 1);
        let fields = self.groups.iter().flat_map(|g| g.fields.iter()).chain(
            self.grids
                .iter()
                .flat_map(|g| g.rows.iter().flat_map(|r| r.cells.iter().flatten())),
        );
        if let Some(f) = fields
            .filter(|f| inside(&f.span))
            .min_by_key(|f| f.span.len())
        {
            return Some(f.path.clone());
        }
        for g in &self.grids {
            for (i, r) in g.rows.iter().enumerate() {
                if inside(&r.span) {
                    let mut p = g.path.clone();
                    p.push(Seg::Index(i));
                    return Some(p);
                }
            }
        }
        self.groups
            .iter()
            .filter(|g| !g.path.is_empty() && inside(&g.span))
            .min_by_key(|g| g.span.len())
            .map(|g| g.path.clone())
    }
}

/// One change the form asks for.
#[derive(Debug, Clone, Deserialize, Serialize, PartialEq)]
#[serde(tag = "op", rename_all = "snake_case")]
pub enum Edit {
    /// Set a field to the text typed (empty removes the key, so the default applies).
    Set { path: Path, value: String },
    /// Append a row to an array of tables: a copy of its last row, named anew.
    AddRow { path: Path },
    /// Remove row `index` of an array of tables.
    RemoveRow { path: Path, index: usize },
}

/// Why an edit could not be applied (the text is then unchanged).
#[derive(Debug, Clone, PartialEq)]
pub struct EditError {
    pub path: Path,
    pub message: String,
}

fn err(path: &Path, message: impl Into<String>) -> EditError {
    EditError {
        path: path.clone(),
        message: message.into(),
    }
}

/// The value a typed text becomes, shaped like the value it replaces (`like`): a string stays
/// a string, a number is read as one where it can be (else kept as text, so the spec's own
/// check names what is wrong), a literal must parse as TOML.
fn typed(text: &str, like: Option<&Value>, path: &Path) -> Result<Value, EditError> {
    let text = text.trim();
    match like {
        Some(Value::Integer(_)) | Some(Value::Float(_)) | Some(Value::Boolean(_)) => Ok(text
            .parse::<Value>()
            .ok()
            .filter(is_plain)
            .unwrap_or_else(|| text.into())),
        Some(Value::Array(_)) | Some(Value::InlineTable(_)) => text.parse::<Value>().map_err(|e| {
            err(
                path,
                format!(
                    "not a TOML value: {} (write it as in the TOML text, e.g. [\"a\", \"b\"])",
                    e.to_string().trim()
                ),
            )
        }),
        _ => Ok(text.into()),
    }
}

/// Apply edits to a spec's text; the rest of the text (comments, order, spacing) is kept.
pub fn apply(text: &str, edits: &[Edit]) -> Result<String, EditError> {
    let mut doc: DocumentMut = text
        .parse()
        .map_err(|e: toml_edit::TomlError| err(&Vec::new(), e.message().to_string()))?;
    for e in edits {
        match e {
            Edit::Set { path, value } => set(&mut doc, path, value)?,
            Edit::AddRow { path } => {
                let a = array_at(&mut doc, path)?;
                let Some(last) = a.iter().last().cloned() else {
                    return Err(err(path, "no row to copy"));
                };
                let mut row = last;
                row.set_position(None);
                if let Some(name) = row.get("name").and_then(|n| n.as_str()).map(str::to_string) {
                    let taken: Vec<String> = a
                        .iter()
                        .filter_map(|t| t.get("name").and_then(|n| n.as_str()).map(String::from))
                        .collect();
                    let fresh = (2..)
                        .map(|n| format!("{name} ({n})"))
                        .find(|c| !taken.contains(c))
                        .unwrap_or_default();
                    row["name"] = toml_edit::value(fresh);
                }
                a.push(row);
            }
            Edit::RemoveRow { path, index } => {
                let a = array_at(&mut doc, path)?;
                if *index >= a.len() {
                    return Err(err(path, format!("there is no row {}", index + 1)));
                }
                a.remove(*index);
                if a.is_empty() {
                    remove(&mut doc, path);
                }
            }
        }
    }
    Ok(doc.to_string())
}

fn remove(doc: &mut DocumentMut, path: &Path) {
    if let Some((Seg::Key(last), parent)) = path.split_last() {
        if let Some(t) = item_at(doc.as_item_mut(), parent).and_then(Item::as_table_mut) {
            t.remove(last);
        }
    }
}

/// The item at `path`: keys step into tables, an index into a row of an array of tables.
fn item_at<'a>(item: &'a mut Item, path: &[Seg]) -> Option<&'a mut Item> {
    match path.split_first() {
        None => Some(item),
        Some((Seg::Key(k), rest)) => item_at(item.as_table_mut()?.get_mut(k)?, rest),
        Some((Seg::Index(i), rest)) => {
            let row = item.as_array_of_tables_mut()?.get_mut(*i)?;
            let (Seg::Key(k), rest) = rest.split_first()? else {
                return None;
            };
            item_at(row.get_mut(k)?, rest)
        }
    }
}

fn array_at<'a>(
    doc: &'a mut DocumentMut,
    path: &Path,
) -> Result<&'a mut toml_edit::ArrayOfTables, EditError> {
    item_at(doc.as_item_mut(), path)
        .and_then(Item::as_array_of_tables_mut)
        .ok_or_else(|| err(path, "not a list of rows in this spec"))
}

/// The table that holds the last key of `path`, created (as an inline table inside a value)
/// where a row or table does not have it yet.
fn set(doc: &mut DocumentMut, path: &Path, text: &str) -> Result<(), EditError> {
    // Split the path where it leaves the tables: before it, tables and rows; after it, keys of
    // a value (an inline table) or an index into a list.
    let mut table: &mut Table = doc.as_table_mut();
    let mut i = 0;
    while i < path.len() {
        let Seg::Key(k) = &path[i] else {
            return Err(err(path, "a row index must follow a list of rows"));
        };
        match table.get(k) {
            Some(Item::Table(_)) if i + 1 < path.len() => {
                table = table[k.as_str()].as_table_mut().expect("checked");
                i += 1;
            }
            Some(Item::ArrayOfTables(_)) => {
                let Some(Seg::Index(row)) = path.get(i + 1) else {
                    return Err(err(path, "which row?"));
                };
                let row = *row;
                table = table[k.as_str()]
                    .as_array_of_tables_mut()
                    .and_then(|a| a.get_mut(row))
                    .ok_or_else(|| err(path, format!("there is no row {}", row + 1)))?;
                i += 2;
            }
            _ => break,
        }
    }
    let rest = &path[i..];
    let Some((Seg::Key(key), inner)) = rest.split_first() else {
        return Err(err(path, "not a setting of this spec"));
    };
    if inner.is_empty() {
        let old = table.get(key).and_then(Item::as_value).cloned();
        if text.trim().is_empty() {
            table.remove(key);
            return Ok(());
        }
        let mut v = typed(text, old.as_ref(), path)?;
        match (&old, table.get_mut(key)) {
            (Some(old), Some(slot)) => {
                *v.decor_mut() = old.decor().clone();
                *slot = Item::Value(v);
            }
            _ => {
                table.insert(key, Item::Value(v));
            }
        }
        return Ok(());
    }
    // Inside a value: an inline table's key or a list's entry.
    let holder = table
        .entry(key)
        .or_insert(Item::Value(Value::InlineTable(InlineTable::new())));
    let Some(mut v) = holder.as_value_mut() else {
        return Err(err(path, "not a setting of this spec"));
    };
    for (j, s) in inner.iter().enumerate() {
        let last = j + 1 == inner.len();
        v = match (s, v) {
            (Seg::Key(k), Value::InlineTable(t)) => {
                if last {
                    let old = t.get(k).cloned();
                    if text.trim().is_empty() {
                        t.remove(k);
                    } else {
                        let mut nv = typed(text, old.as_ref(), path)?;
                        match (&old, t.get_mut(k)) {
                            (Some(old), Some(slot)) => {
                                *nv.decor_mut() = old.decor().clone();
                                *slot = nv;
                            }
                            _ => {
                                t.insert(k, nv);
                            }
                        }
                    }
                    return Ok(());
                }
                t.get_mut(k)
                    .ok_or_else(|| err(path, "not a setting of this spec"))?
            }
            (Seg::Index(n), Value::Array(a)) => {
                if last {
                    let Some(old) = a.get(*n).cloned() else {
                        return Err(err(path, format!("there is no entry {}", n + 1)));
                    };
                    let mut nv = typed(text, Some(&old), path)?;
                    *nv.decor_mut() = old.decor().clone();
                    a.replace(*n, nv);
                    return Ok(());
                }
                a.get_mut(*n)
                    .ok_or_else(|| err(path, format!("there is no entry {}", n + 1)))?
            }
            _ => return Err(err(path, "not a setting of this spec")),
        };
    }
    Ok(())
}

/// Apply a fragment that `fit`, `design` or `tune` prints: each list of rows in it (`[[run]]`)
/// replaces the spec's list of that name; each table in it is set key by key into the spec's
/// table, except the tables named in `whole`, which replace the spec's table entirely (`fit`
/// hands back the whole `[reaction]`).
pub fn apply_fragment(text: &str, fragment: &str, whole: &[&str]) -> Result<String, EditError> {
    let mut doc: DocumentMut = text
        .parse()
        .map_err(|e: toml_edit::TomlError| err(&Vec::new(), e.message().to_string()))?;
    let frag: DocumentMut = fragment.parse().map_err(|e: toml_edit::TomlError| {
        err(
            &Vec::new(),
            format!("the suggestion is not TOML: {}", e.message()),
        )
    })?;
    for (k, item) in frag.iter() {
        let mut item = item.clone();
        unposition(&mut item);
        match item {
            Item::Table(t) if !whole.contains(&k) && doc.get(k).is_some_and(Item::is_table) => {
                let into = doc[k].as_table_mut().expect("checked");
                for (kk, v) in t.iter() {
                    let mut v = v.clone();
                    match (v.as_value_mut(), into.get_mut(kk)) {
                        (Some(nv), Some(Item::Value(old))) => {
                            *nv.decor_mut() = old.decor().clone();
                            *old = nv.clone();
                        }
                        _ => {
                            into.insert(kk, v);
                        }
                    }
                }
            }
            other => {
                let old_pos = doc.get(k).and_then(first_position);
                let mut other = other;
                if let Some(p) = old_pos {
                    set_first_position(&mut other, p);
                }
                doc.insert(k, other);
            }
        }
    }
    Ok(doc.to_string())
}

fn unposition(item: &mut Item) {
    match item {
        Item::Table(t) => {
            t.set_position(None);
            for (_, i) in t.iter_mut() {
                unposition(i);
            }
        }
        Item::ArrayOfTables(a) => {
            for t in a.iter_mut() {
                t.set_position(None);
                for (_, i) in t.iter_mut() {
                    unposition(i);
                }
            }
        }
        _ => {}
    }
}

fn first_position(item: &Item) -> Option<isize> {
    match item {
        Item::Table(t) => t.position(),
        Item::ArrayOfTables(a) => a.iter().next().and_then(Table::position),
        _ => None,
    }
}

fn set_first_position(item: &mut Item, p: isize) {
    match item {
        Item::Table(t) => t.set_position(Some(p)),
        Item::ArrayOfTables(a) => {
            if let Some(t) = a.iter_mut().next() {
                t.set_position(Some(p));
            }
        }
        _ => {}
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const SPEC: &str = r#"# a comment at the top
[plan]
title = "A"
total_volume = "50.0 mL"      # every run
stations = 8

[timing]
species = "S2O3^2-"
concentration = "0.100 mM"
window = ["15 s", "10 min"]

[[run]]
name = "reference"
targets = { "I-" = "2.00 mM", "H+" = "20.0 mM" }

[[run]]
name = "iodide x2"
targets = { "I-" = "4.00 mM", "H+" = "20.0 mM" }
"#;

    fn k(s: &str) -> Seg {
        Seg::Key(s.into())
    }

    #[test]
    fn quantities_split_into_number_and_unit() {
        assert_eq!(
            split_quantity("50.0 mL"),
            Some(("50.0".into(), "mL".into()))
        );
        assert_eq!(split_quantity("1 %"), Some(("1".into(), "%".into())));
        assert_eq!(split_quantity("KNO3 0.500 M"), None);
        assert_eq!(split_quantity("reference"), None);
    }

    #[test]
    fn the_form_lists_tables_rows_and_inline_keys_with_hints() {
        let f = read(SPEC).unwrap();
        let plan = &f.groups[0];
        assert_eq!(plan.name, "plan");
        let vol = &plan.fields[1];
        assert_eq!(vol.path, vec![k("plan"), k("total_volume")]);
        assert_eq!(vol.hint.as_deref(), Some("every run"));
        assert_eq!(
            vol.shown,
            Shown::Quantity {
                number: "50.0".into(),
                unit: "mL".into()
            }
        );
        let window: Vec<_> = f.groups[1].fields.iter().map(|x| x.label.clone()).collect();
        assert_eq!(window, ["species", "concentration", "window 1", "window 2"]);
        let runs = &f.grids[0];
        assert_eq!(runs.rows.len(), 2);
        assert_eq!(runs.columns[1], vec![k("targets"), k("I-")]);
    }

    #[test]
    fn a_set_changes_one_value_and_keeps_the_rest_of_the_text() {
        let path = vec![k("run"), Seg::Index(1), k("targets"), k("I-")];
        let out = apply(
            SPEC,
            &[Edit::Set {
                path,
                value: "6.00 mM".into(),
            }],
        )
        .unwrap();
        assert_eq!(out, SPEC.replace("\"4.00 mM\"", "\"6.00 mM\""));
        let out = apply(
            SPEC,
            &[Edit::Set {
                path: vec![k("plan"), k("total_volume")],
                value: "25.0 mL".into(),
            }],
        )
        .unwrap();
        assert!(
            out.contains("total_volume = \"25.0 mL\"      # every run"),
            "{out}"
        );
    }

    #[test]
    fn a_number_field_stays_a_number_and_a_bad_one_stays_visible_as_text() {
        let set = |v: &str| {
            apply(
                SPEC,
                &[Edit::Set {
                    path: vec![k("plan"), k("stations")],
                    value: v.into(),
                }],
            )
            .unwrap()
        };
        assert!(set("6").contains("stations = 6\n"));
        assert!(set("six").contains("stations = \"six\"\n"));
    }

    #[test]
    fn rows_are_added_as_a_renamed_copy_and_removed() {
        let out = apply(
            SPEC,
            &[Edit::AddRow {
                path: vec![k("run")],
            }],
        )
        .unwrap();
        assert!(out.ends_with("[[run]]\nname = \"iodide x2 (2)\"\ntargets = { \"I-\" = \"4.00 mM\", \"H+\" = \"20.0 mM\" }\n"), "{out}");
        let out = apply(
            SPEC,
            &[Edit::RemoveRow {
                path: vec![k("run")],
                index: 0,
            }],
        )
        .unwrap();
        assert!(!out.contains("reference") && out.contains("iodide x2"));
    }

    #[test]
    fn an_empty_value_removes_the_key() {
        let out = apply(
            SPEC,
            &[Edit::Set {
                path: vec![k("plan"), k("stations")],
                value: " ".into(),
            }],
        )
        .unwrap();
        assert!(!out.contains("stations"));
    }

    #[test]
    fn a_located_offset_finds_its_field() {
        let f = read(SPEC).unwrap();
        let at = SPEC.find("4.00 mM").unwrap();
        assert_eq!(
            f.locate(at..at + 7),
            Some(vec![k("run"), Seg::Index(1), k("targets"), k("I-")])
        );
        let at = SPEC.find("[timing]").unwrap();
        assert_eq!(f.locate(at..at + 8), Some(vec![k("timing")]));
    }

    #[test]
    fn a_fragment_replaces_rows_and_sets_table_keys() {
        let frag = "[timing]\nconcentration = \"0.178 mM\"\n\n[[run]]\nname = \"base\"\ntargets = { \"I-\" = \"2.00 mM\" }\n";
        let out = apply_fragment(SPEC, frag, &[]).unwrap();
        assert!(
            out.contains("concentration = \"0.178 mM\"\nwindow"),
            "{out}"
        );
        assert!(out.contains("name = \"base\"") && !out.contains("reference"));
        assert!(out.starts_with("# a comment at the top\n[plan]"));
    }
}
