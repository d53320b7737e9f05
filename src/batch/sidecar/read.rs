//! Reading a sidecar's TOML: the tables walked in file order with their spans, each key looked
//! up in [`super::keys`], each value read as its option reads it, and every mistake reported with
//! the sidecar and its line.

use super::keys::{self, Bound, Kind, OLD_KEYS, Table};
use super::{Layer, PatternLayer, Sidecar, SidecarError, Value};
use std::borrow::Cow;
use std::ops::Range;
use std::path::Path;
use toml::Spanned;
use toml::de::{DeTable, DeValue};

/// The sidecar's text while it is read: turns spans into lines and collects old key names.
struct Reader<'t> {
    path: &'t Path,
    text: &'t str,
    old: Vec<String>,
}

type Key<'i> = Spanned<Cow<'i, str>>;
type Val<'i> = Spanned<DeValue<'i>>;

impl Reader<'_> {
    fn line(&self, span: &Range<usize>) -> usize {
        self.text[..span.start.min(self.text.len())]
            .matches('\n')
            .count()
            + 1
    }

    fn error(&self, span: &Range<usize>, message: String) -> SidecarError {
        SidecarError {
            path: self.path.to_path_buf(),
            line: Some(self.line(span)),
            message,
        }
    }

    /// The file's own spelling of a value, for messages.
    fn shown(&self, v: &Val<'_>) -> String {
        let span = v.span();
        let raw = self.text.get(span).unwrap_or("").trim();
        let mut s: String = raw.chars().take(40).collect();
        if raw.chars().count() > 40 {
            s.push('…');
        }
        s
    }

    /// One key of a layer's table (`table` says which: the top level or `[meter]`/`[bank]`).
    fn entry(
        &mut self,
        layer: &mut Layer,
        table: Table,
        key: &Key<'_>,
        value: &Val<'_>,
    ) -> Result<(), SidecarError> {
        let name = key.get_ref().as_ref();
        let sub = match (table, name) {
            (Table::Top, "meter") => Some(Table::Meter),
            (Table::Top, "bank") => Some(Table::Bank),
            _ => None,
        };
        if let Some(sub) = sub {
            let DeValue::Table(t) = value.get_ref() else {
                return Err(self.error(
                    &key.span(),
                    format!("`{name}` must be a table: [{name}] with its keys on the lines below"),
                ));
            };
            for (k, v) in in_file_order(t) {
                self.entry(layer, sub, k, v)?;
            }
            return Ok(());
        }
        if table == Table::Top && name == "uncertainty" {
            let DeValue::Table(t) = value.get_ref() else {
                return Err(self.error(&key.span(), "`uncertainty` must be a table".into()));
            };
            for (k, v) in in_file_order(t) {
                let old = OLD_KEYS
                    .iter()
                    .find(|o| o.table == "uncertainty" && o.name == k.get_ref().as_ref());
                match old {
                    Some(o) => self.read(layer, Table::Top, o.now, k, v, Some(o))?,
                    None => return Err(self.unknown(Table::Top, k, Some("uncertainty"))),
                }
            }
            return Ok(());
        }
        if keys::find(table, name).is_some() {
            return self.read(layer, table, name, key, value, None);
        }
        let old = OLD_KEYS
            .iter()
            .find(|o| o.table == table.name() && o.name == name);
        match old {
            Some(o) => self.read(layer, table, o.now, key, value, Some(o)),
            None => Err(self.unknown(table, key, None)),
        }
    }

    fn unknown(&self, table: Table, key: &Key<'_>, written_in: Option<&str>) -> SidecarError {
        let name = key.get_ref().as_ref();
        let place = match (written_in, table) {
            (Some(t), _) => format!(" in [{t}]"),
            (None, Table::Top) => String::new(),
            (None, t) => format!(" in [{}]", t.name()),
        };
        let near = keys::KEYS
            .iter()
            .filter(|k| k.table == table)
            .map(|k| (edit_distance(k.name, name), k.name))
            .min();
        let hint = match near {
            Some((d, k)) if d <= 2 => format!("; did you mean `{k}`?"),
            _ => String::new(),
        };
        self.error(
            &key.span(),
            format!(
                "unknown key `{name}`{place}: keys are the options' long names with _ for - \
                 (the README lists them){hint}"
            ),
        )
    }

    /// Reads `value` as the key `now` of `table` into `layer`; `old` when it was written under
    /// an earlier name.
    fn read(
        &mut self,
        layer: &mut Layer,
        table: Table,
        now: &str,
        key: &Key<'_>,
        value: &Val<'_>,
        old: Option<&keys::OldKey>,
    ) -> Result<(), SidecarError> {
        let k = keys::find(table, now)
            .ok_or_else(|| self.error(&key.span(), format!("unknown key `{now}`")))?;
        let v = convert(k.kind, value).ok_or_else(|| {
            self.error(
                &value.span(),
                format!(
                    "`{}` must be {}, not {}",
                    key.get_ref(),
                    k.kind.looks_like(),
                    self.shown(value)
                ),
            )
        })?;
        if let Some(o) = old.filter(|o| o.deprecated) {
            let place = if o.table.is_empty() {
                String::new()
            } else {
                format!("[{}] ", o.table)
            };
            self.old.push(format!(
                "line {} `{place}{}` as `{}`",
                self.line(&key.span()),
                o.name,
                o.now
            ));
        }
        if !layer.set(table, now, v) {
            return Err(self.error(&key.span(), format!("`{now}` cannot be set here")));
        }
        Ok(())
    }
}

/// `value` read as `kind`, or `None` when it is not one.
fn convert(kind: Kind, value: &Val<'_>) -> Option<Value> {
    let number = |v: &DeValue<'_>| -> Option<f64> {
        let text = match v {
            DeValue::Integer(i) if i.radix() == 10 => i.as_str(),
            DeValue::Float(f) => f.as_str(),
            _ => return None,
        };
        text.replace('_', "").parse::<f64>().ok()
    };
    let v = value.get_ref();
    Some(match kind {
        Kind::Channel => match v {
            DeValue::String(s) if !s.trim().is_empty() => Value::Text(s.trim().to_string()),
            DeValue::Integer(i) if i.radix() == 10 => {
                let n: u64 = i.as_str().replace('_', "").parse().ok()?;
                (n >= 1).then(|| Value::Text(n.to_string()))?
            }
            _ => return None,
        },
        Kind::Text | Kind::Path => match v {
            DeValue::String(s) if !s.trim().is_empty() => Value::Text(s.to_string()),
            _ => return None,
        },
        Kind::Choice(words) => match v {
            DeValue::String(s) => {
                let w = s.trim().to_ascii_lowercase();
                words.contains(&w.as_str()).then_some(Value::Text(w))?
            }
            _ => return None,
        },
        Kind::System => match v {
            DeValue::String(s) if crate::capture::System::parse(s).is_some() => {
                Value::Text(s.trim().to_string())
            }
            _ => return None,
        },
        Kind::Flag => match v {
            DeValue::Boolean(b) => Value::Flag(*b),
            _ => return None,
        },
        Kind::Number(bound) => {
            let x = number(v)?;
            let ok = x.is_finite()
                && match bound {
                    Bound::Finite => true,
                    Bound::NonZero => x != 0.0,
                    Bound::Positive => x > 0.0,
                    Bound::NonNegative => x >= 0.0,
                    Bound::Fraction => x > 0.0 && x <= 1.0,
                };
            ok.then_some(Value::Number(x))?
        }
        Kind::Whole(lo, hi) => match v {
            DeValue::Integer(i) if i.radix() == 10 => {
                let n: u64 = i.as_str().replace('_', "").parse().ok()?;
                (lo..=hi).contains(&n).then_some(Value::Whole(n))?
            }
            _ => return None,
        },
        Kind::Numbers => match v {
            DeValue::Array(items) => {
                let xs: Option<Vec<f64>> = items
                    .iter()
                    .map(|x| number(x.get_ref()).filter(|x| x.is_finite() && *x > 0.0))
                    .collect();
                Value::Numbers(xs.filter(|xs| !xs.is_empty())?)
            }
            _ => return None,
        },
    })
}

fn in_file_order<'a, 'i>(table: &'a DeTable<'i>) -> Vec<(&'a Key<'i>, &'a Val<'i>)> {
    let mut entries: Vec<_> = table.iter().collect();
    entries.sort_by_key(|(k, _)| k.span().start);
    entries
}

/// Levenshtein distance, for "did you mean".
fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut prev = row[0];
        row[0] = i + 1;
        for (j, &cb) in b.iter().enumerate() {
            let cur = row[j + 1];
            row[j + 1] = (prev + usize::from(ca != cb)).min(row[j] + 1).min(cur + 1);
            prev = cur;
        }
    }
    row[b.len()]
}

/// Reads sidecar text; `path` is named in messages.
pub(super) fn parse(text: &str, path: &Path) -> Result<Sidecar, SidecarError> {
    let mut r = Reader {
        path,
        text,
        old: Vec::new(),
    };
    let doc = DeTable::parse(text).map_err(|e| {
        let message = e
            .message()
            .lines()
            .map(str::trim)
            .filter(|l| !l.is_empty())
            .collect::<Vec<_>>()
            .join("; ");
        SidecarError {
            path: path.to_path_buf(),
            line: e.span().map(|sp| r.line(&sp)),
            message,
        }
    })?;
    let mut s = Sidecar::default();
    for (key, value) in in_file_order(doc.get_ref()) {
        if key.get_ref().as_ref() != "files" {
            r.entry(&mut s.base, Table::Top, key, value)?;
            continue;
        }
        let sections: Vec<&Val<'_>> = match value.get_ref() {
            DeValue::Array(items) => items.iter().collect(),
            _ => Vec::new(),
        };
        if sections.is_empty() {
            return Err(r.error(
                &key.span(),
                "`files` must be [[files]] sections, each with a pattern".into(),
            ));
        }
        for section in sections {
            let DeValue::Table(t) = section.get_ref() else {
                return Err(r.error(
                    &section.span(),
                    "a [[files]] section must be a table".into(),
                ));
            };
            let mut p = PatternLayer::default();
            let mut pattern = None;
            for (k, v) in in_file_order(t) {
                if k.get_ref().as_ref() == "pattern" {
                    match v.get_ref() {
                        DeValue::String(text) if !text.is_empty() => {
                            super::check_pattern(text).map_err(|m| r.error(&v.span(), m))?;
                            p.line = r.line(&k.span());
                            pattern = Some(text.to_string())
                        }
                        _ => {
                            return Err(r.error(
                                &v.span(),
                                "`pattern` must be a file name pattern in quotes, like \
                                 \"*clamp-b*\""
                                    .into(),
                            ));
                        }
                    }
                } else {
                    r.entry(&mut p.layer, Table::Top, k, v)?;
                }
            }
            p.pattern = pattern.ok_or_else(|| {
                r.error(
                    &section.span(),
                    "a [[files]] section needs a `pattern`, like pattern = \"*clamp-b*\"".into(),
                )
            })?;
            s.files.push(p);
        }
    }
    if !r.old.is_empty() {
        s.note = Some(format!(
            "{}: old key names read as today's: {}; rename them (the README lists the keys)",
            path.display(),
            r.old.join(", ")
        ));
    }
    Ok(s)
}
