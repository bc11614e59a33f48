//! The Python module `concord`: the library's commands as functions that return plain
//! dicts and lists. Every figure is the JSON contract of the command line (the same library
//! call renders the same JSON text, which Python's `json` reads), so a figure here equals
//! the one `concord analyze --format json` prints, bit for bit. Long calls run without the
//! GIL; a sweep looks for Ctrl-C between its chunks of points.

use std::path::PathBuf;

use concord::analysis::compare::summarise;
use concord::analysis::sweep::{SweepPlan, SweepRow, prepare_sweep, sweep as run_sweep};
use concord::analysis::timed_tune::{default_rules, tune_with_confirmation};
use concord::analysis::tune::{CoverageFigure, TuneRequest, tune as run_tune};
use concord::analysis::{AnalysisError, AnalysisOptions, analyze as run_analyze};
use concord::cli::CliError;
use concord::cli::args::AccuracyArgs;
use concord::cli::values;
use concord::model::{self, ModelError};
use concord::report::{
    ReportInput, TOOL_VERSION, compare as compare_report, json, sweep as sweep_report,
    tune as tune_report,
};
use pyo3::exceptions::PyException;
use pyo3::prelude::*;
use pyo3::types::{PyDict, PyList};

pyo3::create_exception!(
    concord,
    ConcordError,
    PyException,
    "A request concord cannot carry out: a bad value, or a computation that failed. The \
     message is the one the command line prints."
);
pyo3::create_exception!(
    concord,
    ArchitectureError,
    ConcordError,
    "An architecture file that cannot be read or is invalid. `str(e)` lists every problem as \
     `file:line:col: error: key: message (fix: ...)`; `e.diagnostics` holds them as dicts."
);

/// The default target error of every reported probability (the command line's default).
const DEFAULT_TOLERANCE: f64 = 1e-11;

/// A loaded and compiled architecture file.
#[pyclass(frozen, module = "concord", name = "Architecture")]
struct PyArchitecture {
    inner: model::Architecture,
}

#[pymethods]
impl PyArchitecture {
    /// The file name as given (or the name passed to `loads`).
    #[getter]
    fn path(&self) -> &str {
        &self.inner.path
    }

    /// The `name` of the file.
    #[getter]
    fn name(&self) -> &str {
        &self.inner.model.name
    }

    /// The unit of every deviation, limit and amplitude.
    #[getter]
    fn unit(&self) -> &str {
        &self.inner.model.unit
    }

    /// The TOML text as read.
    #[getter]
    fn source(&self) -> &str {
        &self.inner.source
    }

    /// The fault sites, in file order.
    #[getter]
    fn sites(&self) -> Vec<String> {
        self.inner
            .model
            .faults
            .iter()
            .map(|f| f.name.clone())
            .collect()
    }

    /// The warnings of the reader, as the command line prints them.
    #[getter]
    fn warnings(&self) -> Vec<String> {
        self.inner.warnings.iter().map(|d| d.to_string()).collect()
    }

    fn __repr__(&self) -> String {
        format!(
            "<concord.Architecture {:?} from {:?}>",
            self.inner.model.name, self.inner.path
        )
    }
}

/// A model error as `ArchitectureError`, with its diagnostics as dicts.
fn architecture_error(py: Python<'_>, error: &ModelError) -> PyErr {
    let err = ArchitectureError::new_err(error.to_string());
    let list = PyList::empty(py);
    for d in error.diagnostics() {
        let item = PyDict::new(py);
        let filled = item
            .set_item("file", &d.file)
            .and_then(|()| item.set_item("line", d.line))
            .and_then(|()| item.set_item("column", d.column))
            .and_then(|()| item.set_item("key", &d.key))
            .and_then(|()| item.set_item("message", &d.message))
            .and_then(|()| item.set_item("fix", &d.fix))
            .and_then(|()| list.append(item));
        if let Err(e) = filled {
            return e;
        }
    }
    match err.value(py).setattr("diagnostics", list) {
        Ok(()) => err,
        Err(e) => e,
    }
}

/// A command failure as the Python exception that fits it, with the command line's message.
fn cli_error(py: Python<'_>, error: CliError) -> PyErr {
    match &error {
        CliError::File(model_error) => architecture_error(py, model_error),
        _ => ConcordError::new_err(error.to_string()),
    }
}

fn analysis_error(py: Python<'_>, error: AnalysisError) -> PyErr {
    cli_error(py, CliError::from(error))
}

/// The analysis options for a tolerance, checked as `--tolerance` is.
fn options(py: Python<'_>, tolerance: Option<f64>) -> PyResult<AnalysisOptions> {
    AccuracyArgs { tolerance }
        .options()
        .map_err(|e| cli_error(py, e))
}

/// Parses JSON text with Python's own `json` module.
fn from_json<'py>(py: Python<'py>, text: &str) -> PyResult<Bound<'py, PyAny>> {
    py.import("json")?.call_method1("loads", (text,))
}

fn coverage_figure(py: Python<'_>, figure: &str) -> PyResult<CoverageFigure> {
    match figure {
        "dc" => Ok(CoverageFigure::Dc),
        "dc_all_dangerous" => Ok(CoverageFigure::DcAllDangerous),
        other => Err(cli_error(
            py,
            CliError::Value {
                flag: "figure".into(),
                message: format!(
                    "\"{other}\" is no coverage figure; give \"dc\" or \"dc_all_dangerous\""
                ),
            },
        )),
    }
}

/// Loads and compiles an architecture file.
///
/// Raises ArchitectureError (with file:line:col messages) when it is unreadable or invalid.
#[pyfunction]
fn load(py: Python<'_>, path: PathBuf) -> PyResult<PyArchitecture> {
    let result = py.detach(|| model::load(&path));
    result
        .map(|inner| PyArchitecture { inner })
        .map_err(|e| architecture_error(py, &e))
}

/// Compiles an architecture from TOML text; `name` stands for the file in messages.
///
/// Raises ArchitectureError (with name:line:col messages) when the text is invalid.
#[pyfunction]
#[pyo3(signature = (text, name = "<string>"))]
fn loads(py: Python<'_>, text: &str, name: &str) -> PyResult<PyArchitecture> {
    let result = py.detach(|| model::load_str(text, name));
    result
        .map(|inner| PyArchitecture { inner })
        .map_err(|e| architecture_error(py, &e))
}

/// The figures of `concord analyze --format json` as a dict (`curves=True` is
/// `--with-curves`; `tolerance` is `--tolerance`).
#[pyfunction]
#[pyo3(signature = (architecture, *, tolerance = None, curves = false))]
fn analyze<'py>(
    py: Python<'py>,
    architecture: &PyArchitecture,
    tolerance: Option<f64>,
    curves: bool,
) -> PyResult<Bound<'py, PyAny>> {
    let options = options(py, tolerance)?;
    let arch = &architecture.inner;
    let text = py.detach(|| -> Result<String, CliError> {
        let mut analysis = run_analyze(&arch.model, &options, curves)?;
        // The file's [tolerances], as `concord analyze` computes them.
        if !arch.tolerances.is_empty() {
            analysis.tolerances = Some(concord::analysis::tolerances::over_box(
                arch,
                &arch.tolerances,
                &options,
            )?);
        }
        let input = ReportInput {
            architecture: arch,
            analysis: &analysis,
            method: "exact",
            verification: None,
        };
        Ok(json::render(&input)?)
    });
    let text = text.map_err(|e| cli_error(py, e))?;
    from_json(py, &text)
}

/// Why a sweep stopped early.
enum Stop {
    Analysis(AnalysisError),
    Interrupted(PyErr),
}

impl From<AnalysisError> for Stop {
    fn from(e: AnalysisError) -> Self {
        Stop::Analysis(e)
    }
}

/// The columns of a sweep, named as the command line's CSV header names them.
struct Columns {
    has_series: bool,
    names: Vec<String>,
    values: Vec<Vec<Option<ColumnValue>>>,
}

enum ColumnValue {
    Number(f64),
    Count(usize),
    Text(String),
}

impl Columns {
    fn new(plan: &SweepPlan, sites: &[String], isolation: bool) -> Self {
        let mut names = vec!["index".to_string(), plan.vary.key.clone()];
        if let Some(s) = &plan.series {
            names.push(s.key.clone());
        }
        for k in ["false_alarm", "residual_fit", "spfm", "lfm"] {
            names.push(k.to_string());
            names.push(format!("{k}_error"));
        }
        names.push("asil_spfm".into());
        names.push("asil_lfm".into());
        for s in sites {
            for k in [
                "dc",
                "dc_error",
                "dc_all_dangerous",
                "dc_all_dangerous_error",
                "p_vu",
                "p_vu_error",
                "worst_sigma",
            ] {
                names.push(format!("{s}.{k}"));
            }
        }
        if isolation {
            names.extend(sweep_report::isolation_columns(sites));
        }
        let values = names.iter().map(|_| Vec::new()).collect();
        Columns {
            has_series: plan.series.is_some(),
            names,
            values,
        }
    }

    fn push(&mut self, row: &SweepRow) {
        use ColumnValue::{Count, Number, Text};
        // The ASIL as the JSON rows write it (its serde name).
        let asil = |a| match serde_json::to_value(a) {
            Ok(serde_json::Value::String(s)) => Some(Text(s)),
            _ => None,
        };
        let mut cells = vec![Some(Count(row.index)), Some(Number(row.x))];
        if self.has_series {
            cells.push(row.series.map(Number));
        }
        for e in [row.false_alarm, row.residual_fit, row.spfm, row.lfm] {
            cells.push(Some(Number(e.value)));
            cells.push(Some(Number(e.error)));
        }
        cells.push(asil(row.asil_spfm));
        cells.push(asil(row.asil_lfm));
        for s in &row.sites {
            cells.push(s.dc.map(|d| Number(d.value)));
            cells.push(s.dc.map(|d| Number(d.error)));
            cells.push(Some(Number(s.dc_all_dangerous.value)));
            cells.push(Some(Number(s.dc_all_dangerous.error)));
            cells.push(Some(Number(s.p_vu.value)));
            cells.push(Some(Number(s.p_vu.error)));
            cells.push(s.worst_sigma.map(Number));
        }
        if let Some(isolation) = &row.isolation {
            for e in sweep_report::isolation_cells(isolation) {
                cells.push(Some(Number(e.value)));
                cells.push(Some(Number(e.error)));
            }
        }
        for (column, cell) in self.values.iter_mut().zip(cells) {
            column.push(cell);
        }
    }

    fn into_dict(self, py: Python<'_>) -> PyResult<Bound<'_, PyDict>> {
        let dict = PyDict::new(py);
        for (name, column) in self.names.into_iter().zip(self.values) {
            let list = PyList::empty(py);
            for cell in column {
                match cell {
                    Some(ColumnValue::Number(x)) => list.append(x)?,
                    Some(ColumnValue::Count(n)) => list.append(n)?,
                    Some(ColumnValue::Text(s)) => list.append(s)?,
                    None => list.append(py.None())?,
                }
            }
            dict.set_item(name, list)?;
        }
        Ok(dict)
    }
}

/// A parameter sweep, as `concord sweep FILE --vary KEY=FROM:TO` (or `KEY=V1,V2,...`):
/// a dict of columns (lists of equal length, one entry per point, in point order), named
/// as the CSV header names them: `index`, the swept key, the series key if any,
/// `false_alarm`, `false_alarm_error`, ..., `asil_spfm`, `asil_lfm`, then per fault site
/// `SITE.dc`, `SITE.dc_error`, `SITE.dc_all_dangerous`, `SITE.dc_all_dangerous_error`,
/// `SITE.p_vu`, `SITE.p_vu_error`, `SITE.worst_sigma` (None where the figure has none);
/// for a file with an `[isolation]` section then `continues`, `shutdown`, `fault_stays` and
/// per fault site `SITE.isolated`, `SITE.wrong_channel`, `SITE.none_blamed`, each followed
/// by its `_error`. Ctrl-C stops it (KeyboardInterrupt).
#[pyfunction]
#[pyo3(signature = (architecture, vary, *, points = 50, log = false, series = None, series_points = 5, series_log = false, tolerance = None))]
#[allow(clippy::too_many_arguments)]
fn sweep<'py>(
    py: Python<'py>,
    architecture: &PyArchitecture,
    vary: &str,
    points: usize,
    log: bool,
    series: Option<&str>,
    series_points: usize,
    series_log: bool,
    tolerance: Option<f64>,
) -> PyResult<Bound<'py, PyDict>> {
    let options = options(py, tolerance)?;
    let arch = &architecture.inner;
    let vary_axis =
        values::axis(vary, points, log.then_some("log"), "vary").map_err(|e| cli_error(py, e))?;
    let series_axis = match series {
        Some(spec) => Some(
            values::axis(
                spec,
                series_points,
                series_log.then_some("series_log"),
                "series",
            )
            .map_err(|e| cli_error(py, e))?,
        ),
        None => None,
    };
    let plan = SweepPlan::new(vary_axis, series_axis).map_err(|e| analysis_error(py, e))?;
    let sites = prepare_sweep(arch, &plan).map_err(|e| analysis_error(py, e))?;
    let mut columns = Columns::new(&plan, &sites, arch.model.isolation.is_some());
    let outcome = py.detach(|| {
        run_sweep(arch, &plan, &options, |row| {
            columns.push(&row);
            Python::attach(|py| py.check_signals()).map_err(Stop::Interrupted)
        })
    });
    match outcome {
        Ok(()) => columns.into_dict(py),
        Err(Stop::Analysis(e)) => Err(analysis_error(py, e)),
        Err(Stop::Interrupted(e)) => Err(e),
    }
}

/// Comparator tuning, as `concord tune FILE --target-dc X --format json`: the JSON object
/// as a dict. `target_dc` is a fraction or a percentage string ("95%"); `figure` is "dc" or
/// "dc_all_dangerous"; `scale` is "LO:HI"; `with_confirmation` chooses the confirmation
/// rule too (a file with [timing]).
#[pyfunction]
#[pyo3(signature = (architecture, target_dc, *, figure = "dc_all_dangerous", check = None, sites = None, scale = "0.1:10", points = 41, with_confirmation = false, tolerance = None))]
#[allow(clippy::too_many_arguments)]
fn tune<'py>(
    py: Python<'py>,
    architecture: &PyArchitecture,
    target_dc: &Bound<'py, PyAny>,
    figure: &str,
    check: Option<String>,
    sites: Option<Vec<String>>,
    scale: &str,
    points: usize,
    with_confirmation: bool,
    tolerance: Option<f64>,
) -> PyResult<Bound<'py, PyAny>> {
    let options = options(py, tolerance)?;
    let arch = &architecture.inner;
    let target_text = match target_dc.extract::<f64>() {
        Ok(x) => x.to_string(),
        Err(_) => target_dc.extract::<String>()?,
    };
    let target =
        values::coverage_target(&target_text, "target_dc").map_err(|e| cli_error(py, e))?;
    let mut request = TuneRequest::new(check, coverage_figure(py, figure)?, target);
    request.sites = sites.unwrap_or_default();
    request.scale_range = values::range(scale, "scale").map_err(|e| cli_error(py, e))?;
    request.curve_points = points;
    let text = py.detach(|| -> Result<String, CliError> {
        if with_confirmation {
            let samples = arch.model.timing.as_ref().map_or(0, |t| t.samples);
            let result = tune_with_confirmation(arch, &request, &default_rules(samples), &options)?;
            return Ok(tune_report::confirmation_json(
                &result, &request, &arch.path,
            )?);
        }
        let result = run_tune(arch, &request, &options, &|| {})?;
        Ok(tune_report::json(&result, &arch.path, &arch.source)?)
    });
    let text = text.map_err(|e| cli_error(py, e))?;
    from_json(py, &text)
}

/// Architectures side by side, as `concord compare FILE... --format json`: the JSON object
/// as a dict (rows in the order given; `figure` is "dc" or "dc_all_dangerous"). The
/// `seconds` of each row is the measured computation time, so it differs from run to run.
#[pyfunction]
#[pyo3(signature = (architectures, *, figure = "dc", tolerance = None))]
fn compare<'py>(
    py: Python<'py>,
    architectures: Vec<PyRef<'py, PyArchitecture>>,
    figure: &str,
    tolerance: Option<f64>,
) -> PyResult<Bound<'py, PyAny>> {
    let options = options(py, tolerance)?;
    let all_dangerous = coverage_figure(py, figure)? == CoverageFigure::DcAllDangerous;
    let archs: Vec<&model::Architecture> = architectures.iter().map(|a| &a.inner).collect();
    let text = py.detach(|| -> Result<String, CliError> {
        let mut rows = Vec::with_capacity(archs.len());
        for arch in &archs {
            rows.push(summarise(arch, &options)?);
        }
        Ok(compare_report::json(&rows, all_dangerous)?)
    });
    let text = text.map_err(|e| cli_error(py, e))?;
    from_json(py, &text)
}

/// The version of the concord library this module was built from.
#[pyfunction]
fn version() -> &'static str {
    TOOL_VERSION
}

/// The module `concord`.
#[pymodule]
#[pyo3(name = "concord")]
fn concord_module(m: &Bound<'_, PyModule>) -> PyResult<()> {
    let py = m.py();
    m.add("__version__", TOOL_VERSION)?;
    m.add("DEFAULT_TOLERANCE", DEFAULT_TOLERANCE)?;
    m.add("ConcordError", py.get_type::<ConcordError>())?;
    m.add("ArchitectureError", py.get_type::<ArchitectureError>())?;
    m.add_class::<PyArchitecture>()?;
    m.add_function(wrap_pyfunction!(load, m)?)?;
    m.add_function(wrap_pyfunction!(loads, m)?)?;
    m.add_function(wrap_pyfunction!(analyze, m)?)?;
    m.add_function(wrap_pyfunction!(sweep, m)?)?;
    m.add_function(wrap_pyfunction!(tune, m)?)?;
    m.add_function(wrap_pyfunction!(compare, m)?)?;
    m.add_function(wrap_pyfunction!(version, m)?)?;
    Ok(())
}
