//! `beatfold._native`: the Python bindings of the beatfold library (PyO3 + rust-numpy).
//!
//! **Research use only.** Not a medical device; not for diagnosis or treatment decisions.
//!
//! This module is thin glue: arrays in, the library's functions with the library's own checked
//! parameter structs and defaults, arrays or JSON text out. The public Python API (and its
//! docstrings) lives in `beatfold/__init__.py`. Long work runs with the interpreter lock
//! released; an input array is copied once, into the library's `f64` row-major layout (a
//! `float32` array is widened in that same copy). Library errors become `ValueError` (bad
//! values or parameters, analysis impossible) or `OSError` (files that cannot be read or
//! written), with the library's message.

// `!(x > 0.0)` is used on purpose: unlike `x <= 0.0` it also rejects NaN.
#![allow(clippy::neg_cmp_op_on_partial_ord)]

use beatfold::params::Check;
use beatfold::dimension::{dimension_suite, Method, SuiteParams};
use beatfold::embed::{diffusion_map, DiffusionModel};
use beatfold::io::{self, ReadOptions};
use beatfold::pipeline::{self, AnalyzeParams, InputInfo};
use beatfold::points::Points;
use beatfold::record::{Lead, Record};
use beatfold::report::{self, json_views};
use numpy::ndarray::Array2;
use numpy::{IntoPyArray, PyArray1, PyArray2, PyReadonlyArray1, PyReadonlyArray2};
use pyo3::exceptions::{PyOSError, PyValueError};
use pyo3::prelude::*;
use serde_json::json;
use std::path::{Path, PathBuf};

/// A library error as a Python exception with the library's message.
fn to_py(e: beatfold::Error) -> PyErr {
    use beatfold::Error as E;
    let msg = e.to_string();
    match e {
        E::Input { .. } | E::Io { .. } | E::Output { .. } => PyOSError::new_err(msg),
        E::Param { .. } | E::Analysis(_) => PyValueError::new_err(msg),
    }
}

fn bad_value(msg: impl Into<String>) -> PyErr {
    PyValueError::new_err(msg.into())
}

fn json_text(v: &serde_json::Value) -> PyResult<String> {
    serde_json::to_string(v).map_err(|e| bad_value(format!("result is not JSON: {e}")))
}

/// A non-negative integer parameter, named in the error.
fn count(name: &str, v: i64) -> PyResult<usize> {
    usize::try_from(v).map_err(|_| {
        to_py(beatfold::Error::param(
            name,
            format!("{v}; must be a whole number ≥ 0"),
        ))
    })
}

/// Row-major `f64` values and shape of a 2-D float32/float64 array (one copy).
fn matrix_of(x: &Bound<'_, PyAny>, what: &str) -> PyResult<(usize, usize, Vec<f64>)> {
    if let Ok(a) = x.extract::<PyReadonlyArray2<'_, f64>>() {
        let v = a.as_array();
        let (n, d) = v.dim();
        let data = match v.as_slice() {
            Some(s) => s.to_vec(),
            None => v.iter().copied().collect(),
        };
        return Ok((n, d, data));
    }
    if let Ok(a) = x.extract::<PyReadonlyArray2<'_, f32>>() {
        let v = a.as_array();
        let (n, d) = v.dim();
        return Ok((n, d, v.iter().map(|&t| f64::from(t)).collect()));
    }
    Err(bad_value(format!(
        "{what}: expected a 2-D float32 or float64 array (rows × columns)"
    )))
}

/// The columns of a 2-D float32/float64 array (samples × leads), each copied once.
fn columns_of(x: &Bound<'_, PyAny>, what: &str) -> PyResult<Vec<Vec<f64>>> {
    if let Ok(a) = x.extract::<PyReadonlyArray2<'_, f64>>() {
        let v = a.as_array();
        return Ok(v.columns().into_iter().map(|c| c.to_vec()).collect());
    }
    if let Ok(a) = x.extract::<PyReadonlyArray2<'_, f32>>() {
        let v = a.as_array();
        return Ok(v
            .columns()
            .into_iter()
            .map(|c| c.iter().map(|&t| f64::from(t)).collect())
            .collect());
    }
    Err(bad_value(format!(
        "{what}: expected a 1-D or 2-D float32 or float64 array (samples × leads)"
    )))
}

/// `f64` values of a 1-D float32/float64 array (one copy).
fn vector_of(x: &Bound<'_, PyAny>, what: &str) -> PyResult<Vec<f64>> {
    if let Ok(a) = x.extract::<PyReadonlyArray1<'_, f64>>() {
        return Ok(a.as_array().iter().copied().collect());
    }
    if let Ok(a) = x.extract::<PyReadonlyArray1<'_, f32>>() {
        return Ok(a.as_array().iter().map(|&t| f64::from(t)).collect());
    }
    Err(bad_value(format!(
        "{what}: expected a 1-D float32 or float64 array"
    )))
}

/// A point cloud from a 2-D array; non-finite values are refused by the library.
fn points_of(x: &Bound<'_, PyAny>, what: &str) -> PyResult<Points> {
    let (n, d, data) = matrix_of(x, what)?;
    Points::new(n, d, data).map_err(|e| bad_value(format!("{what}: {e}")))
}

fn matrix_out<'py>(
    py: Python<'py>,
    n: usize,
    c: usize,
    data: Vec<f64>,
) -> PyResult<Bound<'py, PyArray2<f64>>> {
    let a = Array2::from_shape_vec((n, c), data)
        .map_err(|e| bad_value(format!("result shape {n} × {c}: {e}")))?;
    Ok(a.into_pyarray(py))
}

/// Analysis parameters: the library's defaults overlaid with a JSON object of config-file keys.
fn analyze_params(config_json: Option<&str>) -> PyResult<AnalyzeParams> {
    let p = match config_json {
        Some(t) => AnalyzeParams::from_json_text(t)
            .map_err(|(at, e)| bad_value(format!("parameter `{at}`: {e}")))?,
        None => AnalyzeParams::default(),
    };
    p.validate().map_err(to_py)?;
    Ok(p)
}

/// The library's defaults as JSON text: `analysis` (the config file's keys) and `dimension`.
#[pyfunction]
fn defaults() -> PyResult<String> {
    json_text(&json!({
        "analysis": AnalyzeParams::default(),
        "dimension": SuiteParams::default(),
        "rhythm_window": json_views::RHYTHM_WINDOW,
    }))
}

/// Read a recording (every format the command line reads) into a dict.
#[pyfunction]
#[pyo3(signature = (path, lead=None, fs_hz=None, annotations=None, annotation_suffix=None, dataset=None))]
fn read_record<'py>(
    py: Python<'py>,
    path: PathBuf,
    lead: Option<String>,
    fs_hz: Option<f64>,
    annotations: Option<PathBuf>,
    annotation_suffix: Option<String>,
    dataset: Option<String>,
) -> PyResult<Bound<'py, pyo3::types::PyDict>> {
    let opts = ReadOptions {
        fs_hz,
        annotations,
        annotation_suffix,
        dataset,
        ..ReadOptions::default()
    };
    let loaded = py.detach(|| io::read_record(&path, &opts)).map_err(to_py)?;
    let rec = loaded.record;
    let chosen: Vec<usize> = match &lead {
        Some(_) => vec![pipeline::choose_lead(&rec, lead.as_deref()).map_err(to_py)?],
        None => (0..rec.leads.len()).collect(),
    };
    let n = rec.n_samples();
    let mut signal = Array2::<f64>::zeros((n, chosen.len()));
    for (j, &li) in chosen.iter().enumerate() {
        let s = &rec.leads[li].samples;
        if s.len() != n {
            return Err(to_py(beatfold::Error::input(
                &path,
                format!("lead {}", rec.leads[li].name),
                format!("{} samples, the first lead has {n}", s.len()),
            )));
        }
        for (i, &v) in s.iter().enumerate() {
            signal[[i, j]] = v;
        }
    }
    let d = pyo3::types::PyDict::new(py);
    d.set_item("name", &rec.name)?;
    d.set_item("fs_hz", rec.fs_hz)?;
    d.set_item("signal", signal.into_pyarray(py))?;
    let names: Vec<&str> = chosen.iter().map(|&i| rec.leads[i].name.as_str()).collect();
    let units: Vec<&str> = chosen.iter().map(|&i| rec.leads[i].unit.as_str()).collect();
    d.set_item("lead_names", names)?;
    d.set_item("units", units)?;
    d.set_item("start_time", rec.start_time.clone())?;
    let beat_samples: Vec<i64> = rec
        .annotations
        .beats
        .iter()
        .map(|b| b.sample as i64)
        .collect();
    let codes: String = rec.annotations.beats.iter().map(|b| b.code).collect();
    let rhythms = pyo3::types::PyList::empty(py);
    for r in &rec.annotations.rhythms {
        let rd = pyo3::types::PyDict::new(py);
        rd.set_item("start_s", r.start_s)?;
        rd.set_item("end_s", r.end_s)?;
        rd.set_item("label", &r.label)?;
        rhythms.append(rd)?;
    }
    let ann = pyo3::types::PyDict::new(py);
    ann.set_item("sample", PyArray1::from_vec(py, beat_samples))?;
    ann.set_item("code", codes)?;
    ann.set_item("rhythms", rhythms)?;
    d.set_item("annotations", ann)?;
    d.set_item("warnings", loaded.warnings)?;
    Ok(d)
}

/// Detect beats in a signal (samples × leads, or one lead) sampled at `fs_hz`.
#[pyfunction]
#[pyo3(signature = (signal, fs_hz, config_json=None))]
fn detect_beats<'py>(
    py: Python<'py>,
    signal: &Bound<'py, PyAny>,
    fs_hz: f64,
    config_json: Option<&str>,
) -> PyResult<Bound<'py, pyo3::types::PyDict>> {
    if !(fs_hz.is_finite() && fs_hz > 0.0) {
        return Err(to_py(beatfold::Error::param(
            "fs_hz",
            format!("{fs_hz} Hz; the sampling rate must be a finite number above 0 Hz"),
        )));
    }
    // Each lead is copied once, straight from the array into its own vector.
    let columns: Vec<Vec<f64>> = match vector_of(signal, "signal") {
        Ok(v) => vec![v],
        Err(_) => columns_of(signal, "signal")?,
    };
    for (j, c) in columns.iter().enumerate() {
        if let Some(i) = c.iter().position(|v| !v.is_finite()) {
            return Err(bad_value(format!(
                "signal: sample {i} of lead {j} is not finite"
            )));
        }
    }
    let params = analyze_params(config_json)?.check().map_err(to_py)?;
    let leads: Vec<Lead> = columns
        .into_iter()
        .enumerate()
        .map(|(j, samples)| Lead {
            name: j.to_string(),
            unit: String::new(),
            samples,
        })
        .collect();
    let rec = Record {
        name: "array".into(),
        fs_hz,
        leads,
        start_time: None,
        annotations: Default::default(),
    };
    let b = py
        .detach(|| pipeline::detect_beats(&rec, &params))
        .map_err(to_py)?;
    let d = pyo3::types::PyDict::new(py);
    let samples: Vec<i64> = b.samples.iter().map(|&s| s as i64).collect();
    d.set_item("samples", PyArray1::from_vec(py, samples))?;
    d.set_item("rr_s", PyArray1::from_vec(py, b.rr_s))?;
    d.set_item("labels", b.labels.iter().collect::<String>())?;
    d.set_item("agreement", b.agreement)?;
    d.set_item("beat_agreement", PyArray1::from_vec(py, b.beat_agreement))?;
    d.set_item("primary_detector", format!("{:?}", b.primary_detector))?;
    Ok(d)
}

/// A fitted diffusion map; places new points by Nyström extension.
#[pyclass(frozen, module = "beatfold._native")]
struct FittedMap {
    model: DiffusionModel,
}

#[pymethods]
impl FittedMap {
    /// Diffusion coordinates of new points (rows × input columns) by Nyström extension.
    fn extend<'py>(
        &self,
        py: Python<'py>,
        x: &Bound<'py, PyAny>,
    ) -> PyResult<Bound<'py, PyArray2<f64>>> {
        let pts = points_of(x, "X")?;
        let c = self.model.components();
        let coords = py.detach(|| self.model.extend(&pts)).map_err(to_py)?;
        matrix_out(py, pts.n, c, coords)
    }

    /// Number of input columns the map accepts.
    #[getter]
    fn input_dim(&self) -> usize {
        self.model.input_dim()
    }

    /// The fitted model as JSON text (for pickling); every float is stored by its bits, so the
    /// round trip is exact.
    fn to_json(&self) -> PyResult<String> {
        let v = serde_json::to_value(&self.model).map_err(|e| bad_value(e.to_string()))?;
        json_text(&floats_to_bits(v))
    }

    /// A model from [`FittedMap::to_json`] text.
    #[staticmethod]
    fn from_json(text: &str) -> PyResult<FittedMap> {
        let v: serde_json::Value =
            serde_json::from_str(text).map_err(|e| bad_value(format!("model: {e}")))?;
        let model: DiffusionModel = serde_json::from_value(bits_to_floats(v))
            .map_err(|e| bad_value(format!("model: {e}")))?;
        Ok(FittedMap { model })
    }
}

/// Marker key of a float stored by its bits.
const FLOAT_BITS: &str = "f64_bits";

/// Replace every non-integer number by `{"f64_bits": "<hex>"}`: JSON text parsing need not round
/// floats correctly, bits always round-trip.
fn floats_to_bits(v: serde_json::Value) -> serde_json::Value {
    use serde_json::Value as V;
    match v {
        V::Number(n) if n.is_f64() => {
            let bits = n.as_f64().unwrap_or(f64::NAN).to_bits();
            json!({ FLOAT_BITS: format!("{bits:016x}") })
        }
        V::Array(a) => V::Array(a.into_iter().map(floats_to_bits).collect()),
        V::Object(o) => V::Object(o.into_iter().map(|(k, x)| (k, floats_to_bits(x))).collect()),
        x => x,
    }
}

/// Inverse of [`floats_to_bits`].
fn bits_to_floats(v: serde_json::Value) -> serde_json::Value {
    use serde_json::Value as V;
    match v {
        V::Object(o) if o.len() == 1 && o.contains_key(FLOAT_BITS) => {
            let f = o[FLOAT_BITS]
                .as_str()
                .and_then(|h| u64::from_str_radix(h, 16).ok())
                .map(f64::from_bits);
            match f.and_then(serde_json::Number::from_f64) {
                Some(n) => V::Number(n),
                None => V::Null,
            }
        }
        V::Array(a) => V::Array(a.into_iter().map(bits_to_floats).collect()),
        V::Object(o) => V::Object(o.into_iter().map(|(k, x)| (k, bits_to_floats(x))).collect()),
        x => x,
    }
}

/// Fit a diffusion map on the rows of `x`: returns (model, coordinates, eigenvalues, summary
/// JSON). Parameters start from the library's analysis defaults; `epsilon` (a bandwidth: `local`,
/// `auto` or a number) and `neighbors` overlay them as on the command line.
#[pyfunction]
#[pyo3(signature = (x, components, alpha, t, epsilon, neighbors, seed))]
#[allow(clippy::too_many_arguments, clippy::type_complexity)]
fn diffusion_fit<'py>(
    py: Python<'py>,
    x: &Bound<'py, PyAny>,
    components: i64,
    alpha: f64,
    t: f64,
    epsilon: Option<String>,
    neighbors: Option<i64>,
    seed: i64,
) -> PyResult<(
    FittedMap,
    Bound<'py, PyArray2<f64>>,
    Bound<'py, PyArray1<f64>>,
    String,
)> {
    let mut p = AnalyzeParams::default().diffusion;
    p.components = count("n_components", components)?;
    p.alpha = alpha;
    p.t = t;
    p.seed = count("random_state", seed)? as u64;
    let k = neighbors.map(|k| count("n_neighbors", k)).transpose()?;
    let bandwidth = epsilon
        .map(|e| e.parse::<beatfold::embed::Bandwidth>())
        .transpose()
        .map_err(|m| bad_value(format!("epsilon: {m}")))?;
    p.overlay_kernel(bandwidth, k);
    let p = p.check().map_err(to_py)?;
    let pts = points_of(x, "X")?;
    let e = py.detach(|| diffusion_map(&pts, &p)).map_err(to_py)?;
    let summary = json!({"n": e.n, "components": e.components, "epsilon": e.epsilon,
        "alpha": e.alpha, "t": e.t, "neighbors": e.neighbors, "fit_points": e.fit_points,
        "residual": e.residual, "bandwidth": p.bandwidth.to_string(), "bandwidth_neighbors": p.bandwidth_neighbors});
    let model = e
        .model
        .ok_or_else(|| bad_value("the diffusion map returned no model"))?;
    let coords = matrix_out(py, e.n, e.components, e.coords)?;
    Ok((
        FittedMap { model: *model },
        coords,
        PyArray1::from_vec(py, e.eigenvalues),
        json_text(&summary)?,
    ))
}

/// The dimension suite on the rows of `x`, as the JSON text of `dimension --json`.
#[pyfunction]
#[pyo3(signature = (x, methods, bootstrap, seed, max_points))]
fn intrinsic_dimension(
    py: Python<'_>,
    x: &Bound<'_, PyAny>,
    methods: Option<&str>,
    bootstrap: i64,
    seed: i64,
    max_points: i64,
) -> PyResult<String> {
    // The library's `dimension` block with these values: the suite `analyze` and the CLI run.
    let mut a = AnalyzeParams::default();
    a.dimension.methods = match methods {
        Some(m) => Method::parse_list(m).map_err(to_py)?,
        None => Method::DEFAULT.to_vec(),
    };
    a.dimension.bootstrap = count("bootstrap", bootstrap)?;
    a.dimension.seed = count("random_state", seed)? as u64;
    a.dimension.max_points = count("max_points", max_points)?;
    let p = a.check().map_err(to_py)?.suite();
    let pts = points_of(x, "X")?;
    let s = py.detach(|| dimension_suite(&pts, &p)).map_err(to_py)?;
    json_text(&json_views::dimension_json(&s, json!({"from": "points"})))
}

/// Rhythm measures of an RR series (seconds), as JSON text.
#[pyfunction]
#[pyo3(signature = (rr_s, labels=None, beat_times_s=None, window=None, step=None))]
fn rhythm(
    py: Python<'_>,
    rr_s: &Bound<'_, PyAny>,
    labels: Option<&str>,
    beat_times_s: Option<&Bound<'_, PyAny>>,
    window: Option<&str>,
    step: Option<&str>,
) -> PyResult<String> {
    let rr = vector_of(rr_s, "rr_s")?;
    if let Some(i) = rr.iter().position(|v| !(v.is_finite() && *v > 0.0)) {
        return Err(bad_value(format!(
            "rr_s: interval {i} is {}; RR intervals must be finite and above 0 s",
            rr[i]
        )));
    }
    let labels: Vec<char> = labels.map_or(Vec::new(), |l| l.chars().collect());
    if !labels.is_empty() && labels.len() != rr.len() + 1 {
        return Err(bad_value(format!(
            "labels: {} labels for {} RR intervals; give one label per beat ({})",
            labels.len(),
            rr.len(),
            rr.len() + 1
        )));
    }
    let t_end: Vec<f64> = match beat_times_s {
        Some(t) => {
            let t = vector_of(t, "beat_times_s")?;
            if t.len() != rr.len() + 1 {
                return Err(bad_value(format!(
                    "beat_times_s: {} times for {} RR intervals; give one time per beat ({})",
                    t.len(),
                    rr.len(),
                    rr.len() + 1
                )));
            }
            t[1..].to_vec()
        }
        None => rr
            .iter()
            .scan(0.0, |acc, &r| {
                *acc += r;
                Some(*acc)
            })
            .collect(),
    };
    let window = window.unwrap_or(json_views::RHYTHM_WINDOW);
    let screen_params = beatfold::params::Checked::default();
    let (mut j, sc) = py
        .detach(|| -> beatfold::Result<_> {
            let j = json_views::rr_rhythm_json(&rr, &t_end, &labels, window, step)?;
            let sc = beatfold::rhythm::screen::screen(&rr, &t_end, &screen_params)?;
            Ok((j, sc))
        })
        .map_err(to_py)?;
    j["screen"] = json!({"windows": sc.windows.len(), "episodes": sc.episodes,
        "from": "RR intervals only (no atrial-activity veto)"});
    json_text(&j)
}

/// `beatfold rhythm --json` of a recording, as JSON text: beats detected with the analysis
/// parameters, then the RR measures, the irregular-rhythm screen and the record verdict.
#[pyfunction]
#[pyo3(signature = (path, config_json=None, lead=None, fs_hz=None, window=None, step=None))]
fn rhythm_of_record(
    py: Python<'_>,
    path: PathBuf,
    config_json: Option<&str>,
    lead: Option<String>,
    fs_hz: Option<f64>,
    window: Option<&str>,
    step: Option<&str>,
) -> PyResult<String> {
    let mut params = analyze_params(config_json)?;
    if lead.is_some() {
        params.lead = lead;
    }
    let params = params.check().map_err(to_py)?;
    let window = window.unwrap_or(json_views::RHYTHM_WINDOW);
    // Window options are checked before anything is read.
    use beatfold::rhythm::windowed::Span;
    Span::parse(window).map_err(to_py)?;
    step.map(Span::parse).transpose().map_err(to_py)?;
    let opts = ReadOptions {
        fs_hz,
        ..ReadOptions::default()
    };
    let j = py
        .detach(|| -> beatfold::Result<serde_json::Value> {
            let rec = io::read_record(&path, &opts)?.record;
            let b = pipeline::detect_beats(&rec, &params)?;
            let sc = pipeline::screen_rhythm(&b, rec.fs_hz, &params)?;
            let (verdict, _) = beatfold::verdicts::record_verdict(&rec, &params)?;
            json_views::record_rhythm_json(&rec.name, &b, rec.fs_hz, &sc, &verdict, window, step)
        })
        .map_err(to_py)?;
    json_text(&j)
}

/// The whole chain on one recording, written to `out_dir`; returns `summary.json`'s text.
#[pyfunction]
#[pyo3(signature = (path, out_dir, config_json=None, lead=None, fs_hz=None, annotations=None))]
fn analyze(
    py: Python<'_>,
    path: PathBuf,
    out_dir: PathBuf,
    config_json: Option<&str>,
    lead: Option<String>,
    fs_hz: Option<f64>,
    annotations: Option<PathBuf>,
) -> PyResult<String> {
    let mut params = analyze_params(config_json)?;
    if lead.is_some() {
        params.lead = lead;
    }
    let params = params.check().map_err(to_py)?;
    let opts = ReadOptions {
        fs_hz,
        annotations,
        ..ReadOptions::default()
    };
    let summary = py
        .detach(|| -> beatfold::Result<serde_json::Value> {
            let loaded = io::read_record(&path, &opts)?;
            let info = InputInfo {
                name: path.display().to_string(),
                sha256: Some(io::sha256_file(&path)?),
                warnings: loaded.warnings.clone(),
            };
            let a = pipeline::analyze(&loaded.record, &info, &params, &mut |_, _| {})?;
            report::write_all(&a, Path::new(&out_dir), &beatfold::params::Checked::default())?;
            Ok(report::summary_json(&a))
        })
        .map_err(to_py)?;
    json_text(&summary)
}

/// Compiled part of the `beatfold` package. Research use only; not for diagnosis.
#[pymodule]
fn _native(m: &Bound<'_, PyModule>) -> PyResult<()> {
    m.add("NOTICE", beatfold::NOTICE)?;
    m.add("VERSION", env!("CARGO_PKG_VERSION"))?;
    m.add_class::<FittedMap>()?;
    m.add_function(wrap_pyfunction!(defaults, m)?)?;
    m.add_function(wrap_pyfunction!(read_record, m)?)?;
    m.add_function(wrap_pyfunction!(detect_beats, m)?)?;
    m.add_function(wrap_pyfunction!(diffusion_fit, m)?)?;
    m.add_function(wrap_pyfunction!(intrinsic_dimension, m)?)?;
    m.add_function(wrap_pyfunction!(rhythm, m)?)?;
    m.add_function(wrap_pyfunction!(rhythm_of_record, m)?)?;
    m.add_function(wrap_pyfunction!(analyze, m)?)?;
    Ok(())
}
