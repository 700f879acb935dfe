//! `hedgerow` for Python: decode and score numpy logits with a threshold profile, through the
//! same engine as the command line (hedgerow-core), and add up tallies of a batch's parts.
//!
//! The arrays are read in place (C or Fortran order, row by row through their strides) with
//! the GIL released; only the decisions (or the greedy paths, to score) are kept.

mod inputs;
mod rows;
mod sums;

use std::sync::Arc;

use hedgerow_core::npy::{Dtype, Header, Scalar};
use hedgerow_core::{intake, Batch, Error, ErrorKind, Ingested, Location, Taxonomy};
use numpy::{
    PyArray1, PyArray2, PyArrayMethods, PyReadonlyArray2, PyUntypedArray, PyUntypedArrayMethods,
};
use pyo3::exceptions::PyValueError;
use pyo3::prelude::*;
use pyo3::types::PyDict;

use inputs::{value_error, Chosen, Source};
use rows::{NotFinite, Walk};
use sums::Tally;

/// How messages name the logits array.
const LOGITS: &str = "logits";

/// A logits array borrowed read-only, in one of the float types the engine reads.
enum Logits<'py> {
    F16(PyReadonlyArray2<'py, half::f16>),
    F32(PyReadonlyArray2<'py, f32>),
    F64(PyReadonlyArray2<'py, f64>),
}

/// Run `$body` with `$view` bound to the array's `ArrayView2`, whatever its float type.
macro_rules! with_view {
    ($logits:expr, $view:ident => $body:expr) => {
        match $logits {
            Logits::F16(a) => {
                let $view = a.as_array();
                $body
            }
            Logits::F32(a) => {
                let $view = a.as_array();
                $body
            }
            Logits::F64(a) => {
                let $view = a.as_array();
                $body
            }
        }
    };
}

fn located(kind: ErrorKind) -> PyErr {
    value_error(Error::new(LOGITS, Location::default(), kind).into())
}

impl<'py> Logits<'py> {
    /// `obj` as `(rows, M)` logits for `tax`: shape, column count and dtype checked, with the
    /// command line's messages.
    fn borrow(obj: &Bound<'py, PyAny>, tax: &Taxonomy) -> PyResult<(Self, Header)> {
        let untyped = obj.downcast::<PyUntypedArray>().map_err(|_| {
            PyValueError::new_err(format!(
                "{LOGITS}: expected a numpy array of shape (rows, {}), found {}",
                tax.len(),
                obj.get_type()
                    .name()
                    .map(|n| n.to_string())
                    .unwrap_or_default()
            ))
        })?;
        let shape: Vec<u64> = untyped.shape().iter().map(|&d| d as u64).collect();
        if shape.len() != 2 {
            return Err(located(ErrorKind::Shape {
                found: hedgerow_core::npy::shape_text(&shape),
                expected: format!("(rows, {}) with one column per taxonomy node", tax.len()),
            }));
        }
        if shape[1] != tax.len() as u64 {
            return Err(located(ErrorKind::ColumnCount {
                found: shape[1],
                expected: tax.len() as u64,
            }));
        }
        let (logits, scalar) = if let Ok(a) = obj.downcast::<PyArray2<f32>>() {
            (Logits::F32(a.readonly()), Scalar::F32)
        } else if let Ok(a) = obj.downcast::<PyArray2<f64>>() {
            (Logits::F64(a.readonly()), Scalar::F64)
        } else if let Ok(a) = obj.downcast::<PyArray2<half::f16>>() {
            (Logits::F16(a.readonly()), Scalar::F16)
        } else {
            let dtype: String = obj.getattr("dtype")?.str()?.extract()?;
            return Err(PyValueError::new_err(format!(
                "{LOGITS}: dtype `{dtype}`: expected float16, float32 or float64 logits (in \
                 the machine's byte order)"
            )));
        };
        let header = Header {
            dtype: Dtype {
                scalar,
                big_endian: false,
            },
            fortran_order: !untyped.is_c_contiguous() && untyped.is_fortran_contiguous(),
            shape,
            data_offset: 0,
        };
        Ok((logits, header))
    }
}

/// A row with a value that is not finite, as the command line reports it.
fn not_finite(e: NotFinite, tax: &Taxonomy) -> PyErr {
    value_error(e.error(LOGITS, tax).into())
}

/// Decodes logits with a taxonomy and a threshold profile (or settings given as keywords).
///
/// `Decoder(taxonomy, profile=None, *, rule=None, thresholds=None, object_threshold=None,
/// temperatures=None, unverifiable=None, node_thresholds=None)`. `taxonomy` is a path, CSV or
/// JSON text, or bytes; `profile` a path, JSON text, bytes or a dict. Keyword settings
/// override the profile's, as the command line's flags override `--profile`.
#[pyclass(frozen, module = "hedgerow")]
struct Decoder {
    tax: Arc<Taxonomy>,
    source: Arc<Source>,
    chosen: Chosen,
    /// One threshold per node, the root's (t_0) last.
    thresholds: Vec<f64>,
    /// One temperature per depth.
    temps: Vec<f64>,
}

impl Decoder {
    fn build(
        taxonomy: &Bound<PyAny>,
        profile: Option<&Bound<PyAny>>,
        settings: Option<&Bound<PyDict>>,
    ) -> PyResult<Self> {
        let (tax, source) = inputs::taxonomy(taxonomy)?;
        let profile = match profile.filter(|p| !p.is_none()) {
            Some(p) => Some(inputs::profile(p, &tax)?),
            None => None,
        };
        let chosen = inputs::choose(&tax, profile, settings)?;
        let thresholds = chosen.settings.thresholds.resolve(&tax);
        let temps = chosen.temperatures.expand(tax.max_depth());
        Ok(Decoder {
            tax,
            source,
            chosen,
            thresholds,
            temps,
        })
    }

    fn walk(&self) -> Walk<'_> {
        Walk {
            tax: &self.tax,
            temps: &self.temps,
        }
    }

    /// The batch for scoring: paths read from `logits` (GIL released), joined with labels and
    /// objectness as the command line joins its files.
    fn batch(
        &self,
        py: Python,
        logits: &Bound<PyAny>,
        labels: &Bound<PyAny>,
        objectness: Option<&Bound<PyAny>>,
        threads: usize,
    ) -> PyResult<Batch> {
        let tax = &self.tax;
        let labels = inputs::labels(labels, tax)?;
        let objectness = match objectness.filter(|o| !o.is_none()) {
            Some(o) => Some(inputs::objectness(o)?),
            None => None,
        };
        let (array, header) = Logits::borrow(logits, tax)?;
        let walk = self.walk();
        let paths =
            with_view!(&array, view => py.allow_threads(|| rows::paths_all(&walk, view, threads)))
                .map_err(|e| not_finite(e, tax))?;
        let ingested = Ingested {
            paths: Arc::new(paths),
            // The fingerprint of the data is for profiles scored on files; arrays have none.
            digest: String::new(),
            header,
        };
        Batch::new(
            tax,
            LOGITS,
            ingested,
            self.chosen.temperatures.clone(),
            labels,
            objectness,
        )
        .map_err(value_error)
    }

    fn tally_of(
        &self,
        py: Python,
        logits: &Bound<PyAny>,
        labels: &Bound<PyAny>,
        objectness: Option<&Bound<PyAny>>,
        threads: usize,
    ) -> PyResult<Tally> {
        let batch = self.batch(py, logits, labels, objectness, threads)?;
        let tallies = hedgerow_core::tally(&self.tax, &batch, &self.chosen.settings);
        Ok(Tally::new(
            tallies,
            Arc::clone(&self.tax),
            Arc::clone(&self.source),
        ))
    }
}

#[pymethods]
impl Decoder {
    #[new]
    #[pyo3(signature = (taxonomy, profile=None, **settings))]
    fn new(
        taxonomy: &Bound<PyAny>,
        profile: Option<&Bound<PyAny>>,
        settings: Option<&Bound<PyDict>>,
    ) -> PyResult<Self> {
        Decoder::build(taxonomy, profile, settings)
    }

    /// Decode every row of `logits` (`[N, M]` float16/32/64, C or Fortran order).
    ///
    /// Returns a dict of numpy arrays of length N: `column` (int64: the predicted node's
    /// column, -1 for the root, -2 when the row abstained), `depth` (int32: 0 at the root and
    /// when abstained) and `probability` (float64: the quantity the rule compared for the
    /// predicted node; P(root) at the root and when abstained). `objectness` (N probabilities)
    /// gives P(root) and applies the object threshold; a profile scored with objectness needs
    /// it unless `no_objectness=True`. `threads` > 1 decodes blocks of rows in parallel.
    #[pyo3(signature = (logits, objectness=None, *, no_objectness=false, threads=1))]
    fn decode<'py>(
        &self,
        py: Python<'py>,
        logits: &Bound<'py, PyAny>,
        objectness: Option<&Bound<'py, PyAny>>,
        no_objectness: bool,
        threads: usize,
    ) -> PyResult<Bound<'py, PyDict>> {
        let tax = &self.tax;
        let objectness = match objectness.filter(|o| !o.is_none()) {
            Some(_) if no_objectness => {
                return Err(PyValueError::new_err(
                    "objectness and no_objectness=True: give one or the other",
                ))
            }
            Some(o) => Some(inputs::objectness(o)?),
            None => None,
        };
        if let Some((name, Some(true))) = &self.chosen.profile {
            if objectness.is_none() && !no_objectness {
                return Err(PyValueError::new_err(format!(
                    "{name}: this profile was scored with objectness (object threshold {}): \
                     expected objectness= (one probability per row); pass no_objectness=True \
                     to decode with P(root) = 1 and no object threshold",
                    self.chosen.settings.thresholds.object
                )));
            }
        }
        let (array, header) = Logits::borrow(logits, tax)?;
        let n = header.shape[0];
        if let Some(o) = &objectness {
            let wrong = intake::row_errors(LOGITS, n, &[(o.file.as_str(), o.values.len() as u64)]);
            if !wrong.is_empty() {
                return Err(value_error(hedgerow_core::Errors(wrong)));
            }
        }
        let decoder = hedgerow_core::Decoder {
            tax,
            rule: self.chosen.settings.rule,
            thresholds: &self.thresholds,
            objectness: objectness.is_some(),
        };
        let walk = self.walk();
        let values = objectness.as_ref().map(|o| o.values.as_slice());
        let decided = with_view!(&array, view => py.allow_threads(|| {
            rows::decide_all(&walk, &decoder, values, view, threads)
        }))
        .map_err(|e| not_finite(e, tax))?;
        let out = PyDict::new(py);
        out.set_item("column", PyArray1::from_vec(py, decided.column))?;
        out.set_item("depth", PyArray1::from_vec(py, decided.depth))?;
        out.set_item("probability", PyArray1::from_vec(py, decided.probability))?;
        Ok(out)
    }

    /// The integer sums behind the metrics of `logits` against `labels` (a path, or an array
    /// of column indices or node ids); tallies of parts of a batch add up to the whole's.
    #[pyo3(signature = (logits, labels, objectness=None, *, threads=1))]
    fn tally(
        &self,
        py: Python,
        logits: &Bound<PyAny>,
        labels: &Bound<PyAny>,
        objectness: Option<&Bound<PyAny>>,
        threads: usize,
    ) -> PyResult<Tally> {
        self.tally_of(py, logits, labels, objectness, threads)
    }

    /// The metrics of `logits` against `labels`: the dict `hedgerow evaluate --json` prints.
    #[pyo3(signature = (logits, labels, objectness=None, *, threads=1))]
    fn evaluate<'py>(
        &self,
        py: Python<'py>,
        logits: &Bound<'py, PyAny>,
        labels: &Bound<'py, PyAny>,
        objectness: Option<&Bound<'py, PyAny>>,
        threads: usize,
    ) -> PyResult<Bound<'py, PyAny>> {
        self.tally_of(py, logits, labels, objectness, threads)?
            .metrics(py)
    }

    /// Node ids in column order.
    #[getter]
    fn node_ids(&self) -> Vec<String> {
        self.tax.ids().to_vec()
    }

    /// The taxonomy's depth D.
    #[getter]
    fn depth(&self) -> usize {
        self.tax.max_depth()
    }

    /// The taxonomy's fingerprint (as profiles record it).
    #[getter]
    fn fingerprint(&self) -> &str {
        self.tax.fingerprint()
    }

    /// The node id of each entry of a `column` array: "" for the root (-1), None when the row
    /// abstained (-2).
    fn ids(&self, columns: &Bound<PyAny>) -> PyResult<Vec<Option<String>>> {
        let columns: Vec<i64> = columns
            .py()
            .import("numpy")?
            .getattr("asarray")?
            .call1((columns,))?
            .call_method1("reshape", (-1,))?
            .call_method0("tolist")?
            .extract()?;
        let m = self.tax.len() as i64;
        columns
            .iter()
            .enumerate()
            .map(|(r, &c)| match c {
                rows::ABSTAINED => Ok(None),
                rows::ROOT => Ok(Some(String::new())),
                c if (0..m).contains(&c) => Ok(Some(self.tax.id(c as u32).to_string())),
                c => Err(PyValueError::new_err(format!(
                    "columns, row {r}: {c}: expected -2 (abstained), -1 (the root) or a column \
                     index 0..{m}"
                ))),
            })
            .collect()
    }

    fn __repr__(&self) -> String {
        let s = &self.chosen.settings;
        format!(
            "Decoder({} nodes, depth {}, rule {}, thresholds {:?}, object threshold {})",
            self.tax.len(),
            self.tax.max_depth(),
            s.rule.as_str(),
            s.thresholds.depths,
            s.thresholds.object
        )
    }
}

/// The metrics of a batch: the dict `hedgerow evaluate --json` prints for the same data.
///
/// `evaluate(*, taxonomy, logits, labels, objectness=None, profile=None, threads=1,
/// **settings)`; the arguments are those of `Decoder` and `Decoder.evaluate`.
#[pyfunction]
#[pyo3(signature = (*, taxonomy, logits, labels, objectness=None, profile=None, threads=1, **settings))]
#[allow(clippy::too_many_arguments)]
fn evaluate<'py>(
    py: Python<'py>,
    taxonomy: &Bound<'py, PyAny>,
    logits: &Bound<'py, PyAny>,
    labels: &Bound<'py, PyAny>,
    objectness: Option<&Bound<'py, PyAny>>,
    profile: Option<&Bound<'py, PyAny>>,
    threads: usize,
    settings: Option<&Bound<'py, PyDict>>,
) -> PyResult<Bound<'py, PyAny>> {
    Decoder::build(taxonomy, profile, settings)?
        .tally_of(py, logits, labels, objectness, threads)?
        .metrics(py)
}

/// The tallies of a batch (the integer sums behind `evaluate`'s metrics): `a + b` adds the
/// tallies of two parts, `.metrics()` gives the metrics. Same arguments as `evaluate`.
#[pyfunction]
#[pyo3(signature = (*, taxonomy, logits, labels, objectness=None, profile=None, threads=1, **settings))]
#[allow(clippy::too_many_arguments)]
fn tally<'py>(
    py: Python<'py>,
    taxonomy: &Bound<'py, PyAny>,
    logits: &Bound<'py, PyAny>,
    labels: &Bound<'py, PyAny>,
    objectness: Option<&Bound<'py, PyAny>>,
    profile: Option<&Bound<'py, PyAny>>,
    threads: usize,
    settings: Option<&Bound<'py, PyDict>>,
) -> PyResult<Tally> {
    Decoder::build(taxonomy, profile, settings)?.tally_of(py, logits, labels, objectness, threads)
}

#[pymodule]
fn hedgerow(m: &Bound<PyModule>) -> PyResult<()> {
    m.add_class::<Decoder>()?;
    m.add_class::<Tally>()?;
    m.add_function(wrap_pyfunction!(evaluate, m)?)?;
    m.add_function(wrap_pyfunction!(tally, m)?)?;
    m.add_function(wrap_pyfunction!(sums::restore_tally, m)?)?;
    m.add("ROOT", rows::ROOT)?;
    m.add("ABSTAINED", rows::ABSTAINED)?;
    m.add("__version__", env!("CARGO_PKG_VERSION"))?;
    Ok(())
}
