//! Writing a changed supply back into the text it came from, so that a technician's comments,
//! layout and keys railcheck does not know survive a save (toml_edit's document model).

use toml_edit::{DocumentMut, Item, Table, Value};

/// `original` with the modelled values of `new` in place of those of `old`: changed values
/// are replaced where they stand, removed ones deleted, new ones added; keys that `old` did
/// not model (unknown to railcheck) are kept as they are.
pub fn merge(
    original: &str,
    old_text: &str,
    new_text: &str,
) -> Result<String, toml_edit::TomlError> {
    let mut doc: DocumentMut = original.parse()?;
    let old: DocumentMut = old_text.parse()?;
    let new: DocumentMut = new_text.parse()?;
    merge_table(doc.as_table_mut(), old.as_table(), new.as_table());
    Ok(doc.to_string())
}

fn same_value(a: &Value, b: &Value) -> bool {
    let number = |v: &Value| v.as_float().or_else(|| v.as_integer().map(|i| i as f64));
    match (number(a), number(b)) {
        (Some(x), Some(y)) => x == y,
        _ => {
            let (mut a, mut b) = (a.clone(), b.clone());
            a.decor_mut().clear();
            b.decor_mut().clear();
            a.to_string().trim() == b.to_string().trim()
        }
    }
}

fn same_item(a: &Item, b: &Item) -> bool {
    match (a, b) {
        (Item::Value(x), Item::Value(y)) => same_value(x, y),
        _ => a.to_string() == b.to_string(),
    }
}

fn merge_table(doc: &mut Table, old: &Table, new: &Table) {
    let empty = Table::new();
    for (key, new_item) in new.iter() {
        let old_item = old.get(key);
        match doc.get_mut(key) {
            // Absent from the text but modelled the same before and after: a default the
            // technician never wrote, so it stays unwritten.
            None if old_item.is_some_and(|o| same_item(o, new_item)) => {}
            None => {
                doc.insert(key, new_item.clone());
            }
            Some(item) => merge_item(item, old_item, new_item, &empty),
        }
    }
    let removed: Vec<String> = doc
        .iter()
        .filter(|(k, _)| !new.contains_key(k) && old.contains_key(k))
        .map(|(k, _)| k.to_string())
        .collect();
    for k in removed {
        doc.remove(&k);
    }
}

fn merge_item(item: &mut Item, old: Option<&Item>, new: &Item, empty: &Table) {
    match (item, new) {
        (Item::Table(t), Item::Table(n)) => {
            let o = old.and_then(Item::as_table).unwrap_or(empty);
            merge_table(t, o, n);
        }
        (Item::ArrayOfTables(a), Item::ArrayOfTables(n)) => {
            let o = old.and_then(Item::as_array_of_tables);
            let keep = a.len().min(n.len());
            for i in 0..keep {
                let ot = o.and_then(|o| o.get(i)).unwrap_or(empty);
                if let (Some(t), Some(nt)) = (a.get_mut(i), n.get(i)) {
                    merge_table(t, ot, nt);
                }
            }
            for i in keep..n.len() {
                if let Some(nt) = n.get(i) {
                    a.push(nt.clone());
                }
            }
            while a.len() > n.len() {
                a.remove(a.len() - 1);
            }
        }
        (Item::Value(v), Item::Value(nv)) => {
            if !same_value(v, nv) {
                let decor = v.decor().clone();
                *v = nv.clone();
                *v.decor_mut() = decor;
            }
        }
        (item, new) => *item = new.clone(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn comments_and_unknown_keys_survive_a_change() {
        let original =
            "# my pump\nname = \"a\"  # keep me\nodd_key = 3\n\n[filter]\n# the can\nuf = 2200.0\n";
        let old = "name = \"a\"\n\n[filter]\nuf = 2200.0\n";
        let new = "name = \"a\"\n\n[filter]\nuf = 1000.0\n";
        let out = merge(original, old, new).unwrap();
        assert!(
            out.contains("# my pump") && out.contains("# keep me") && out.contains("# the can")
        );
        assert!(out.contains("odd_key = 3"));
        assert!(out.contains("uf = 1000.0"), "{out}");
    }

    #[test]
    fn an_integer_written_by_hand_is_not_rewritten_as_a_float() {
        let original = "vrms = 230 # the plate\n";
        let out = merge(original, "vrms = 230.0\n", "vrms = 230.0\n").unwrap();
        assert_eq!(out, original);
    }
}
