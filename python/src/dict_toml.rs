//! A Python dict shaped like a design file, written as TOML text for the command's reader
//! (so a dict design gets exactly the file's checks, expressions and messages).
//!
//! Invariants: keys keep the dict's order; a dict becomes a table, a list of dicts an array
//! of tables (inline tables inside arrays), other lists arrays; `bool`, `int`, `float` and
//! `str` keep their TOML types; anything else (None, a set, an object) is refused with the
//! dotted key that holds it.

use pyo3::exceptions::PyTypeError;
use pyo3::prelude::*;
use pyo3::types::{PyBool, PyDict, PyFloat, PyInt, PyList, PyString, PyTuple};
use toml_edit::{Array, ArrayOfTables, DocumentMut, InlineTable, Item, Table, Value};

/// The TOML text of `design`, a dict.
pub fn to_toml(design: &Bound<'_, PyAny>) -> PyResult<String> {
    let dict = design
        .cast::<PyDict>()
        .map_err(|_| PyTypeError::new_err("a design dict must be a dict"))?;
    let mut doc = DocumentMut::new();
    *doc.as_table_mut() = table(dict, "")?;
    Ok(doc.to_string())
}

fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}

fn refuse(path: &str, what: &Bound<'_, PyAny>) -> PyErr {
    let kind = what
        .get_type()
        .name()
        .map(|n| n.to_string())
        .unwrap_or_else(|_| "object".into());
    PyTypeError::new_err(format!(
        "design key `{path}`: a {kind} has no TOML form (use a dict, list, str, bool, int or float)"
    ))
}

fn key_of(k: &Bound<'_, PyAny>, path: &str) -> PyResult<String> {
    k.cast::<PyString>()
        .map(|s| s.to_string())
        .map_err(|_| PyTypeError::new_err(format!("design key in `{path}`: keys must be str")))
}

fn items<'py>(v: &Bound<'py, PyAny>) -> Option<Vec<Bound<'py, PyAny>>> {
    if let Ok(l) = v.cast::<PyList>() {
        return Some(l.iter().collect());
    }
    v.cast::<PyTuple>().ok().map(|t| t.iter().collect())
}

fn table(d: &Bound<'_, PyDict>, path: &str) -> PyResult<Table> {
    let mut t = Table::new();
    for (k, v) in d.iter() {
        let key = key_of(&k, path)?;
        let here = join(path, &key);
        let item = if let Ok(sub) = v.cast::<PyDict>() {
            Item::Table(table(sub, &here)?)
        } else if let Some(list) =
            items(&v).filter(|l| !l.is_empty() && l.iter().all(|x| x.cast::<PyDict>().is_ok()))
        {
            let mut a = ArrayOfTables::new();
            for (n, x) in list.iter().enumerate() {
                let sub = x.cast::<PyDict>().expect("checked: every item is a dict");
                a.push(table(sub, &format!("{here}[{n}]"))?);
            }
            Item::ArrayOfTables(a)
        } else {
            Item::Value(value(&v, &here)?)
        };
        t.insert(&key, item);
    }
    Ok(t)
}

fn value(v: &Bound<'_, PyAny>, path: &str) -> PyResult<Value> {
    if v.cast::<PyBool>().is_ok() {
        return Ok(Value::from(v.extract::<bool>()?));
    }
    if v.cast::<PyInt>().is_ok() {
        let i: i64 = v.extract().map_err(|_| {
            PyTypeError::new_err(format!("design key `{path}`: integer out of range"))
        })?;
        return Ok(Value::from(i));
    }
    if v.cast::<PyFloat>().is_ok() {
        return Ok(Value::from(v.extract::<f64>()?));
    }
    if let Ok(s) = v.cast::<PyString>() {
        return Ok(Value::from(s.to_string()));
    }
    if let Ok(d) = v.cast::<PyDict>() {
        let mut t = InlineTable::new();
        for (k, x) in d.iter() {
            let key = key_of(&k, path)?;
            t.insert(&key, value(&x, &join(path, &key))?);
        }
        return Ok(Value::InlineTable(t));
    }
    if let Some(list) = items(v) {
        let mut a = Array::new();
        for (n, x) in list.iter().enumerate() {
            a.push(value(x, &format!("{path}[{n}]"))?);
        }
        return Ok(Value::Array(a));
    }
    // numpy scalars and arrays: their Python value.
    if v.hasattr("tolist")? {
        return value(&v.call_method0("tolist")?, path);
    }
    Err(refuse(path, v))
}
