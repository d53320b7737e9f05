//! Reading the model's TOML tables: keys in file order, typed fields, one part's table, and the
//! network's part names resolved to indices.

use std::borrow::Cow;
use std::collections::HashMap;
use std::ops::Range;

use toml::Spanned;
use toml::de::{DeTable, DeValue};

use super::expr::{self, Expr};
use super::{ModelErrorKind, Network, Part, PartKind, units};

pub(super) fn in_file_order<'a, 'i>(
    table: &'a DeTable<'i>,
) -> Vec<(&'a Spanned<Cow<'i, str>>, &'a Spanned<DeValue<'i>>)> {
    let mut entries: Vec<_> = table.iter().collect();
    entries.sort_by_key(|(k, _)| k.span().start);
    entries
}

pub(super) fn as_text<'a>(
    value: &'a Spanned<DeValue<'_>>,
    what: &str,
    expected: &'static str,
) -> Result<&'a str, ModelErrorKind> {
    match value.get_ref() {
        DeValue::String(s) => Ok(s.as_ref()),
        _ => Err(ModelErrorKind::WrongType {
            what: what.to_string(),
            expected,
        }),
    }
}

pub(super) fn as_number(value: &Spanned<DeValue<'_>>) -> Option<f64> {
    let text = match value.get_ref() {
        DeValue::Integer(i) if i.radix() == 10 => i.as_str(),
        DeValue::Float(f) => f.as_str(),
        _ => return None,
    };
    text.replace('_', "").parse().ok()
}

pub(super) type Located = (Range<usize>, ModelErrorKind);

pub(super) fn parse_part(
    key: &Spanned<Cow<'_, str>>,
    value: &Spanned<DeValue<'_>>,
) -> Result<Part, Located> {
    let name = key.get_ref().to_string();
    if name.is_empty() || !name.chars().all(expr::is_name_char) {
        return Err((key.span(), ModelErrorKind::BadPartName { name }));
    }
    let DeValue::Table(table) = value.get_ref() else {
        return Err((
            value.span(),
            ModelErrorKind::WrongType {
                what: format!("part '{name}'"),
                expected: "a table, like [parts.R1] with value = \"50 ohm\"",
            },
        ));
    };
    let text = |v, field, expected| part_text(v, &name, field, expected);
    let mut nominal = None;
    let mut tolerance = (0.0, 0.0);
    let mut series_resistance = None;
    let mut declared = None;
    for (k, v) in in_file_order(table) {
        match k.get_ref().as_ref() {
            "value" => {
                let t = text(v, "value", "text in quotes with a unit, like \"50 ohm\"")?;
                nominal = Some((units::parse_value(t).map_err(|e| (v.span(), e))?, t));
            }
            "tolerance" => {
                let t = text(v, "tolerance", "text in quotes, like \"±5%\"")?;
                tolerance = units::parse_tolerance(t).map_err(|e| (v.span(), e))?;
            }
            "series_resistance" => {
                let t = text(v, "series_resistance", "text in quotes, like \"2.1 ohm\"")?;
                let (r, kind) = units::parse_value(t).map_err(|e| (v.span(), e))?;
                if kind != PartKind::Resistor {
                    return Err((
                        v.span(),
                        ModelErrorKind::SeriesResistanceUnit {
                            text: t.to_string(),
                        },
                    ));
                }
                series_resistance = Some((r, v.span()));
            }
            "kind" => {
                let t = text(v, "kind", "\"resistor\", \"inductor\" or \"capacitor\"")?;
                let kind = match t.trim() {
                    "resistor" => PartKind::Resistor,
                    "inductor" => PartKind::Inductor,
                    "capacitor" => PartKind::Capacitor,
                    _ => {
                        return Err((
                            v.span(),
                            ModelErrorKind::UnknownKind {
                                text: t.to_string(),
                            },
                        ));
                    }
                };
                declared = Some((kind, v.span()));
            }
            other => {
                return Err((
                    k.span(),
                    ModelErrorKind::UnknownKey {
                        key: other.to_string(),
                        part: Some(name.clone()),
                    },
                ));
            }
        }
    }
    let Some(((nominal, kind), value_text)) = nominal else {
        return Err((key.span(), ModelErrorKind::MissingValue { part: name }));
    };
    if let Some((declared, span)) = declared
        && declared != kind
    {
        return Err((
            span,
            ModelErrorKind::KindMismatch {
                part: name,
                declared,
                text: value_text.to_string(),
                unit_kind: kind,
            },
        ));
    }
    if let Some((_, span)) = &series_resistance
        && kind != PartKind::Inductor
    {
        return Err((
            span.clone(),
            ModelErrorKind::NotAnInductor { part: name, kind },
        ));
    }
    Ok(Part {
        name,
        kind,
        nominal,
        tol_low: tolerance.0,
        tol_high: tolerance.1,
        series_resistance_ohm: series_resistance.map(|(r, _)| r),
    })
}

fn part_text<'a>(
    value: &'a Spanned<DeValue<'_>>,
    part: &str,
    field: &str,
    expected: &'static str,
) -> Result<&'a str, Located> {
    as_text(value, &format!("{field} of part '{part}'"), expected).map_err(|k| (value.span(), k))
}

/// Turns parsed names into part indices, refusing unknown parts and parts used twice.
pub(super) fn resolve(expr: &Expr, parts: &[Part]) -> Result<Network, ModelErrorKind> {
    let index: HashMap<&str, usize> = parts
        .iter()
        .enumerate()
        .map(|(i, p)| (p.name.as_str(), i))
        .collect();
    let mut seen: Vec<Option<usize>> = vec![None; parts.len()];
    resolve_in(expr, &index, &mut seen)
}

fn resolve_in(
    expr: &Expr,
    index: &HashMap<&str, usize>,
    seen: &mut [Option<usize>],
) -> Result<Network, ModelErrorKind> {
    let all = |items: &[Expr], seen: &mut [Option<usize>]| {
        items
            .iter()
            .map(|e| resolve_in(e, index, seen))
            .collect::<Result<Vec<_>, _>>()
    };
    match expr {
        Expr::Name(name, column) => {
            let Some(&i) = index.get(name.as_str()) else {
                return Err(ModelErrorKind::UnknownPart {
                    name: name.clone(),
                    column: *column,
                });
            };
            if let Some(first) = seen[i] {
                return Err(ModelErrorKind::PartUsedTwice {
                    name: name.clone(),
                    first,
                    second: *column,
                });
            }
            seen[i] = Some(*column);
            Ok(Network::Part(i))
        }
        Expr::Series(items) => Ok(Network::Series(all(items, seen)?)),
        Expr::Parallel(items) => Ok(Network::Parallel(all(items, seen)?)),
    }
}

pub(super) fn mark_used(network: &Network, used: &mut [bool]) {
    match network {
        Network::Part(i) => used[*i] = true,
        Network::Series(items) | Network::Parallel(items) => {
            items.iter().for_each(|n| mark_used(n, used))
        }
    }
}
