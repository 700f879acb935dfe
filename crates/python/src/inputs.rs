//! What a Python caller hands over, turned into the core's values: a taxonomy or profile as a
//! path, text, bytes or dict; settings as keyword arguments; labels and objectness as paths or
//! arrays. Problems become `ValueError`s with the core's messages.

use std::sync::Arc;

use hedgerow_core::intake::{self, Kind};
use hedgerow_core::{
    Errors, Labels, Objectness, Policy, Profile, Rule, Settings, Taxonomy, Temperatures,
};
use pyo3::exceptions::{PyTypeError, PyValueError};
use pyo3::prelude::*;
use pyo3::types::{PyByteArray, PyBytes, PyDict, PyString};

/// The core's problems as one `ValueError`, a line per problem (as the command line prints
/// them, without its `error: ` prefix).
pub fn value_error(e: Errors) -> PyErr {
    PyValueError::new_err(e.to_string())
}

/// A file's contents and the name messages give it: the path as given, or `what` for
/// contents handed over in memory.
#[derive(Debug, Clone)]
pub struct Source {
    pub name: String,
    pub bytes: Vec<u8>,
}

/// Whether `text` is contents rather than a path: `{` (JSON) or a line break (CSV) never
/// start or sit in a path a caller would give.
fn is_contents(text: &str) -> bool {
    let t = text.trim_start();
    t.starts_with('{') || t.starts_with('[') || text.contains('\n')
}

impl Source {
    /// `obj` as a path (str or os.PathLike), text (str holding a line break or starting with
    /// `{`/`[`) or bytes.
    pub fn from_py(obj: &Bound<PyAny>, what: &str) -> PyResult<Self> {
        let py = obj.py();
        if let Ok(b) = obj.downcast::<PyBytes>() {
            return Ok(Source {
                name: what.into(),
                bytes: b.as_bytes().to_vec(),
            });
        }
        if let Ok(b) = obj.downcast::<PyByteArray>() {
            return Ok(Source {
                name: what.into(),
                bytes: b.to_vec(),
            });
        }
        let text: String = match obj.downcast::<PyString>() {
            Ok(s) => s.extract::<String>()?,
            Err(_) => {
                let fspath = py.import("os")?.getattr("fspath")?;
                match fspath.call1((obj,)) {
                    Ok(p) => p.extract::<String>()?,
                    Err(_) => {
                        return Err(PyTypeError::new_err(format!(
                            "{what}: expected a path, text or bytes, found {}",
                            obj.get_type().name()?
                        )))
                    }
                }
            }
        };
        if is_contents(&text) {
            return Ok(Source {
                name: what.into(),
                bytes: text.into_bytes(),
            });
        }
        let bytes = std::fs::read(&text).map_err(|e| {
            pyo3::exceptions::PyOSError::new_err(format!("{text}: cannot read: {e}"))
        })?;
        Ok(Source { name: text, bytes })
    }
}

/// The taxonomy from a path, text or bytes; the source is kept so tallies can be pickled.
pub fn taxonomy(obj: &Bound<PyAny>) -> PyResult<(Arc<Taxonomy>, Arc<Source>)> {
    let source = Source::from_py(obj, "taxonomy")?;
    intake::given_as(&source.name, &source.bytes, Kind::Taxonomy)
        .map_err(|e| value_error(e.into()))?;
    let tax = Taxonomy::parse(&source.bytes, &source.name).map_err(value_error)?;
    Ok((Arc::new(tax), Arc::new(source)))
}

/// The profile from a path, JSON text or bytes, or a dict.
pub fn profile(obj: &Bound<PyAny>, tax: &Taxonomy) -> PyResult<(String, Profile)> {
    let source = if obj.downcast::<PyDict>().is_ok() {
        let dumps = obj.py().import("json")?.getattr("dumps")?;
        Source {
            name: "profile".into(),
            bytes: dumps.call1((obj,))?.extract::<String>()?.into_bytes(),
        }
    } else {
        Source::from_py(obj, "profile")?
    };
    let p = Profile::from_json(&source.bytes, &source.name, tax).map_err(value_error)?;
    Ok((source.name, p))
}

/// The settings keyword arguments, in the order they are applied.
pub const SETTINGS: [&str; 6] = [
    "rule",
    "thresholds",
    "object_threshold",
    "temperatures",
    "unverifiable",
    "node_thresholds",
];

/// Settings chosen for a decode: the profile's (if any), overridden by keyword arguments.
#[derive(Debug, Clone)]
pub struct Chosen {
    pub settings: Settings,
    pub temperatures: Temperatures,
    /// The profile's name and whether it was scored with objectness.
    pub profile: Option<(String, Option<bool>)>,
}

/// One number, or a list of them.
fn numbers(value: &Bound<PyAny>, what: &str) -> Result<Vec<f64>, String> {
    if let Ok(v) = value.extract::<f64>() {
        return Ok(vec![v]);
    }
    value
        .extract::<Vec<f64>>()
        .map_err(|_| format!("{what}: expected a number or a list of numbers"))
}

fn text(value: &Bound<PyAny>, what: &str) -> Result<String, String> {
    value
        .extract::<String>()
        .map_err(|_| format!("{what}: expected a string"))
}

/// Apply the keyword arguments in `kwargs` over the profile's settings (as the command line's
/// flags go over `--profile`); every problem is reported together.
pub fn choose(
    tax: &Taxonomy,
    profile: Option<(String, Profile)>,
    kwargs: Option<&Bound<PyDict>>,
) -> PyResult<Chosen> {
    let (mut settings, mut temps, stamp) = match profile {
        Some((name, p)) => {
            let s = p
                .settings(tax)
                .map_err(|k| PyValueError::new_err(format!("{name}: {k}")))?;
            let t = p.temperatures();
            (s, t, Some((name, p.objectness)))
        }
        None => (Settings::default(), Temperatures::default(), None),
    };
    let mut problems = Vec::new();
    let get = |key: &str| -> PyResult<Option<Bound<PyAny>>> {
        match kwargs {
            Some(d) => Ok(d.get_item(key)?.filter(|v| !v.is_none())),
            None => Ok(None),
        }
    };
    if let Some(d) = kwargs {
        for key in d.keys() {
            let key: String = key.extract()?;
            if !SETTINGS.contains(&key.as_str()) {
                return Err(PyTypeError::new_err(format!(
                    "unexpected keyword argument `{key}`: the settings are {}",
                    SETTINGS.join(", ")
                )));
            }
        }
    }
    if let Some(v) = get("rule")? {
        match text(&v, "rule").map(|s| (Rule::parse(&s), s)) {
            Ok((Some(r), _)) => settings.rule = r,
            Ok((None, s)) => problems.push(format!(
                "rule: expected cumulative or conditional, found `{s}`"
            )),
            Err(m) => problems.push(m),
        }
    }
    if let Some(v) = get("unverifiable")? {
        match text(&v, "unverifiable").map(|s| (Policy::parse(&s), s)) {
            Ok((Some(p), _)) => settings.policy = p,
            Ok((None, s)) => problems.push(format!(
                "unverifiable: expected credit, penalize or exclude, found `{s}`"
            )),
            Err(m) => problems.push(m),
        }
    }
    let mut thresholds = settings.thresholds.clone();
    if let Some(v) = get("node_thresholds")? {
        match v.extract::<Vec<(String, f64)>>().or_else(|_| {
            v.downcast::<PyDict>()
                .map_err(PyErr::from)
                .and_then(|d| d.items().extract::<Vec<(String, f64)>>())
        }) {
            Ok(pairs) => {
                for (id, t) in pairs {
                    match tax.lookup(&id) {
                        Some(node) => {
                            thresholds.nodes.retain(|&(u, _)| u != node);
                            thresholds.nodes.push((node, t));
                        }
                        None => problems.push(format!(
                            "node_thresholds: {id} is not an id of the taxonomy"
                        )),
                    }
                }
            }
            Err(_) => problems
                .push("node_thresholds: expected a dict of node id to threshold in [0, 1]".into()),
        }
    }
    if let Some(v) = get("thresholds")? {
        match numbers(&v, "thresholds") {
            Ok(t) => thresholds.depths = t,
            Err(m) => problems.push(m),
        }
    }
    if let Some(v) = get("object_threshold")? {
        match v.extract::<f64>() {
            Ok(t) => thresholds.object = t,
            Err(_) => problems.push("object_threshold: expected one number".into()),
        }
    }
    if let Err(k) = thresholds.validate() {
        problems.push(format!("thresholds: {k}"));
    }
    settings.thresholds = thresholds;
    if let Some(v) = get("temperatures")? {
        match numbers(&v, "temperatures") {
            Ok(t) => temps = Temperatures(t),
            Err(m) => problems.push(m),
        }
    }
    if let Err(k) = temps.validate() {
        problems.push(format!("temperatures: {k}"));
    }
    if !problems.is_empty() {
        return Err(PyValueError::new_err(problems.join("\n")));
    }
    Ok(Chosen {
        settings,
        temperatures: temps,
        profile: stamp,
    })
}

/// numpy, imported once per call.
fn numpy(py: Python) -> PyResult<Bound<PyModule>> {
    py.import("numpy")
}

/// `obj` as a numpy array (lists and other sequences converted).
fn as_array<'py>(obj: &Bound<'py, PyAny>) -> PyResult<Bound<'py, PyAny>> {
    numpy(obj.py())?.getattr("asarray")?.call1((obj,))
}

/// The dtype kind (`f`, `i`, `u`, `U`, `O`, …), name and shape of an array.
fn describe(array: &Bound<PyAny>) -> PyResult<(String, String, Vec<usize>)> {
    let dtype = array.getattr("dtype")?;
    let kind: String = dtype.getattr("kind")?.extract()?;
    let name: String = dtype.getattr("name")?.extract()?;
    let shape: Vec<usize> = array.getattr("shape")?.extract()?;
    Ok((kind, name, shape))
}

/// `(N,)` or `(N, 1)`, as the command line accepts a column file.
fn check_column(name: &str, shape: &[usize]) -> PyResult<()> {
    match shape {
        [_] | [_, 1] => Ok(()),
        _ => Err(PyValueError::new_err(format!(
            "{name}: shape {shape:?}: expected (rows,) with one value per row"
        ))),
    }
}

/// Labels: a path (CSV or `.npy`), file bytes, or an array/list of column indices (−1 =
/// background) or node ids ("" = background).
pub fn labels(obj: &Bound<PyAny>, tax: &Taxonomy) -> PyResult<Labels> {
    let is_file = obj.downcast::<PyString>().is_ok()
        || obj.downcast::<PyBytes>().is_ok()
        || obj.hasattr("__fspath__")?;
    if is_file {
        let source = Source::from_py(obj, "labels")?;
        intake::given_as(&source.name, &source.bytes, Kind::Labels)
            .map_err(|e| value_error(e.into()))?;
        return Labels::parse(&source.bytes, &source.name, tax).map_err(value_error);
    }
    let array = as_array(obj)?;
    let (kind, dtype, shape) = describe(&array)?;
    check_column("labels", &shape)?;
    let flat = array.call_method1("reshape", (-1,))?;
    match kind.as_str() {
        "i" | "u" | "b" => {
            let ints: Vec<i64> = flat
                .call_method1("astype", ("int64",))?
                .call_method0("tolist")?
                .extract()?;
            Labels::from_indices("labels", ints.into_iter().map(i128::from), tax)
                .map_err(value_error)
        }
        "U" | "S" | "O" => {
            let items: Vec<Bound<PyAny>> = flat.call_method0("tolist")?.extract()?;
            let mut ids = Vec::with_capacity(items.len());
            for (r, item) in items.iter().enumerate() {
                if item.is_none() {
                    ids.push(String::new());
                } else if let Ok(b) = item.downcast::<PyBytes>() {
                    ids.push(String::from_utf8_lossy(b.as_bytes()).into_owned());
                } else {
                    ids.push(item.extract::<String>().map_err(|_| {
                        PyValueError::new_err(format!(
                            "labels, row {r}: expected a node id (a string) or None, found {}",
                            item.get_type()
                                .name()
                                .map(|n| n.to_string())
                                .unwrap_or_default()
                        ))
                    })?);
                }
            }
            Labels::from_ids("labels", ids, tax).map_err(value_error)
        }
        _ => Err(PyValueError::new_err(format!(
            "labels: dtype `{dtype}`: expected integers (column index, -1 for background) or \
             strings (node ids, empty for background)"
        ))),
    }
}

/// Objectness: a `.npy` path or bytes, or an array/list of probabilities in [0, 1].
pub fn objectness(obj: &Bound<PyAny>) -> PyResult<Objectness> {
    let is_file = obj.downcast::<PyString>().is_ok()
        || obj.downcast::<PyBytes>().is_ok()
        || obj.hasattr("__fspath__")?;
    if is_file {
        let source = Source::from_py(obj, "objectness")?;
        intake::given_as(&source.name, &source.bytes, Kind::Objectness)
            .map_err(|e| value_error(e.into()))?;
        return Objectness::parse(&source.bytes, &source.name).map_err(value_error);
    }
    let array = as_array(obj)?;
    let (kind, dtype, shape) = describe(&array)?;
    if kind != "f" {
        return Err(PyValueError::new_err(format!(
            "objectness: dtype `{dtype}`: expected float16, float32 or float64 probabilities"
        )));
    }
    check_column("objectness", &shape)?;
    let values: Vec<f64> = array
        .call_method1("reshape", (-1,))?
        .call_method1("astype", ("float64",))?
        .call_method0("tolist")?
        .extract()?;
    Objectness::from_values("objectness", &values).map_err(value_error)
}
