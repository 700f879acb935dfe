//! `hedgerow.Tally`: the core's [`Tallies`] with the taxonomy they were counted over, so they
//! add (`a + b`, `sum(...)`), turn into metrics, and pickle (to travel between Dask workers).

use std::sync::Arc;

use hedgerow_core::{Tallies, Taxonomy};
use pyo3::exceptions::PyValueError;
use pyo3::prelude::*;
use pyo3::types::{PyBytes, PyInt, PyTuple};

use crate::inputs::{value_error, Source};

/// The integer sums behind one evaluation's metrics. `a + b` adds tallies counted under the
/// same taxonomy and settings (`sum(tallies)` works too); `.metrics()` gives the dict
/// `hedgerow.evaluate` returns. Picklable.
#[pyclass(frozen, module = "hedgerow")]
pub struct Tally {
    tallies: Tallies,
    tax: Arc<Taxonomy>,
    /// The taxonomy as it was read, pickled with the tallies.
    source: Arc<Source>,
}

impl Tally {
    pub fn new(tallies: Tallies, tax: Arc<Taxonomy>, source: Arc<Source>) -> Self {
        Tally {
            tallies,
            tax,
            source,
        }
    }

    fn plus(&self, other: &Bound<PyAny>) -> PyResult<Option<Tally>> {
        if let Ok(other) = other.downcast::<Tally>() {
            let other = other.get();
            let sum = (self.tallies.clone() + other.tallies.clone())
                .map_err(|k| PyValueError::new_err(k.to_string()))?;
            return Ok(Some(Tally::new(
                sum,
                Arc::clone(&self.tax),
                Arc::clone(&self.source),
            )));
        }
        // `sum(tallies)` starts from 0.
        if other.downcast::<PyInt>().is_ok() && other.extract::<i64>().ok() == Some(0) {
            return Ok(Some(Tally::new(
                self.tallies.clone(),
                Arc::clone(&self.tax),
                Arc::clone(&self.source),
            )));
        }
        Ok(None)
    }
}

#[pymethods]
impl Tally {
    fn __add__(&self, py: Python, other: &Bound<PyAny>) -> PyResult<PyObject> {
        match self.plus(other)? {
            Some(t) => Ok(t.into_pyobject(py)?.into_any().unbind()),
            None => Ok(py.NotImplemented()),
        }
    }

    fn __radd__(&self, py: Python, other: &Bound<PyAny>) -> PyResult<PyObject> {
        self.__add__(py, other)
    }

    fn __eq__(&self, other: &Bound<PyAny>) -> bool {
        other
            .downcast::<Tally>()
            .is_ok_and(|o| o.get().tallies == self.tallies)
    }

    /// The metrics: the dict `hedgerow.evaluate` (and `hedgerow evaluate --json`) gives.
    pub fn metrics<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyAny>> {
        let metrics = self
            .tallies
            .clone()
            .into_metrics(&self.tax)
            .map_err(|k| PyValueError::new_err(k.to_string()))?;
        let text =
            serde_json::to_string(&metrics).map_err(|e| PyValueError::new_err(e.to_string()))?;
        py.import("json")?.getattr("loads")?.call1((text,))
    }

    /// Rows tallied.
    #[getter]
    fn rows(&self) -> u64 {
        self.tallies.rows
    }

    fn __reduce__<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyTuple>> {
        let restore = py.import("hedgerow")?.getattr("_restore_tally")?;
        let args = (
            self.source.name.clone(),
            PyBytes::new(py, &self.source.bytes),
            self.tallies.to_json(),
        );
        PyTuple::new(py, [restore, args.into_pyobject(py)?.into_any()])
    }

    fn __repr__(&self) -> String {
        format!(
            "Tally({} rows, rule {}, {} nodes)",
            self.tallies.rows,
            self.tallies.stamp.rule.as_str(),
            self.tallies.stamp.nodes
        )
    }
}

/// Unpickle a [`Tally`]: the taxonomy read again from its bytes, the tallies from JSON.
#[pyfunction]
#[pyo3(name = "_restore_tally")]
pub fn restore_tally(name: String, taxonomy: Vec<u8>, tallies: &str) -> PyResult<Tally> {
    let tax = Taxonomy::parse(&taxonomy, &name).map_err(value_error)?;
    let tallies =
        Tallies::from_json(tallies.as_bytes()).map_err(|k| PyValueError::new_err(k.to_string()))?;
    if tallies.stamp.taxonomy != tax.fingerprint() {
        return Err(PyValueError::new_err(
            "tallies: the pickled taxonomy is not the one they were counted over",
        ));
    }
    Ok(Tally::new(
        tallies,
        Arc::new(tax),
        Arc::new(Source {
            name,
            bytes: taxonomy,
        }),
    ))
}
