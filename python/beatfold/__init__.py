"""beatfold from Python: the beatfold engine on numpy arrays.

Research use only. Not a medical device; not for diagnosis or treatment decisions. Results must be reviewed by qualified clinicians under local regulations.

The functions call the same Rust library as the ``beatfold`` command line, with the library's
own parameter names and defaults (those of the JSON configuration file):

- :func:`read_record` reads every recording format the command line reads;
- :func:`detect_beats` finds beats in a signal array;
- :class:`DiffusionMap` is a diffusion-map embedding (Coifman & Lafon 2006) following
  scikit-learn's estimator conventions (``fit``, ``transform`` by Nystrom extension,
  ``fit_transform``, ``get_params``, ``set_params``);
- :func:`intrinsic_dimension` runs the dimension suite and returns a dict shaped like
  ``beatfold dimension --json``;
- :func:`rhythm` describes an RR series; :func:`analyze` runs the whole chain on a file and
  writes the report, returning the content of ``summary.json``.

Bad values raise ``ValueError``, unreadable files ``OSError``, both with the library's message.
Long work runs with the interpreter lock released.
"""

import json as _json
import os as _os

import numpy as _np

from . import _native

NOTICE = _native.NOTICE
__version__ = _native.VERSION


# The library's defaults, defined once in Rust and shared with the command line and the
# configuration file.
DEFAULTS = _json.loads(_native.defaults())
_DIFF = DEFAULTS["analysis"]["diffusion"]
_DIM = DEFAULTS["dimension"]

__all__ = [
    "NOTICE",
    "DEFAULTS",
    "Record",
    "read_record",
    "detect_beats",
    "DiffusionMap",
    "intrinsic_dimension",
    "rhythm",
    "analyze",
]


def _float_array(x, name, ndim):
    """``x`` as a float32/float64 array of ``ndim`` dimensions, copying only when needed."""
    a = _np.asarray(x)
    if a.dtype not in (_np.float32, _np.float64):
        try:
            a = a.astype(_np.float64)
        except (TypeError, ValueError) as e:
            raise ValueError(f"{name}: not numeric ({e})") from None
    if a.ndim != ndim:
        shape = "points x coordinates" if ndim == 2 else "one value per entry"
        raise ValueError(f"{name}: expected a {ndim}-D array ({shape}), got shape {a.shape}")
    return a


class Record:
    """A recording read by :func:`read_record`.

    Attributes: ``name``, ``signal`` (samples x leads, float64), ``fs_hz``, ``lead_names``,
    ``units``, ``start_time``, ``annotations`` (dict: ``sample`` int64 array, ``code`` one
    character per beat, ``rhythms`` list of ``{start_s, end_s, label}``) and ``warnings``.
    """

    def __init__(self, d):
        self.name = d["name"]
        self.signal = d["signal"]
        self.fs_hz = d["fs_hz"]
        self.lead_names = list(d["lead_names"])
        self.units = list(d["units"])
        self.start_time = d["start_time"]
        self.annotations = d["annotations"]
        self.warnings = list(d["warnings"])

    def __repr__(self):
        n, k = self.signal.shape
        return f"Record({self.name!r}, {n} samples x {k} leads at {self.fs_hz} Hz)"


def read_record(path, lead=None, *, fs_hz=None, annotations=None, annotation_suffix=None,
                dataset=None):
    """Read a recording (``.csv``/``.tsv``/``.txt``, ``.edf``, ``.hea``, ``.h5``).

    ``lead`` (name or zero-based index) keeps one lead; by default every lead is kept.
    ``fs_hz`` is needed for text files without a time column or rate comment; ``annotations``
    names a reference annotation file, ``annotation_suffix`` a PhysioNet annotation suffix
    (default ``atr``), ``dataset`` the HDF5 dataset. Raises ``OSError`` for a file that cannot be
    read or decoded.
    """
    lead = None if lead is None else str(lead)
    return Record(_native.read_record(str(path), lead, fs_hz, None if annotations is None
                                      else str(annotations), annotation_suffix, dataset))


def _config(params):
    return None if not params else _json.dumps(params)


def detect_beats(signal, fs_hz, **params):
    """Detect beats in ``signal`` (samples, or samples x leads) sampled at ``fs_hz`` Hz.

    Keyword parameters are the analysis configuration's keys (see ``DEFAULTS["analysis"]``),
    e.g. ``lead="1"``, ``primary_detector=...``, ``condition={...}``; missing keys take the
    library's defaults. Returns a dict: ``samples`` (int64), ``rr_s`` (seconds), ``labels``
    (one heuristic character per beat), ``agreement`` (bSQI of the two detectors),
    ``beat_agreement`` and ``primary_detector``.
    """
    a = _np.asarray(signal)
    if a.ndim not in (1, 2):
        raise ValueError(f"signal: expected samples (1-D) or samples x leads (2-D), got shape "
                         f"{a.shape}")
    a = _float_array(a, "signal", a.ndim)
    out = _native.detect_beats(a, float(fs_hz), _config(params))
    out["labels"] = _np.array(list(out["labels"]), dtype="<U1")
    return out


try:  # scikit-learn is optional: with it, DiffusionMap carries its estimator tags and mixins.
    from sklearn.base import BaseEstimator as _Base, TransformerMixin as _Mixin

    _BASES = (_Mixin, _Base)
except ImportError:  # pragma: no cover - exercised where scikit-learn is absent
    _BASES = (object,)


class DiffusionMap(*_BASES):
    """Diffusion map (Coifman & Lafon 2006) on a sparse k-nearest-neighbour kernel.

    Parameters (defaults are the library's analysis defaults):

    - ``n_components``: number of non-trivial diffusion coordinates;
    - ``alpha``: density normalisation exponent in [0, 1];
    - ``t``: diffusion time;
    - ``n_neighbors``: neighbours k of the kernel graph (0: dense kernel);
    - ``epsilon``: the kernel bandwidth, as the library's ``bandwidth`` option: ``"local"`` (the
      default: variable bandwidth, Berry & Harlim 2016), ``"auto"`` (one global epsilon by the
      kernel-sum rule, Berry, Giannakis & Harlim 2015) or a fixed epsilon in squared input units;
    - ``random_state``: seed of every random step (an int >= 0).

    After ``fit``: ``embedding_`` (training coordinates), ``eigenvalues_``, ``epsilon_``,
    ``n_features_in_``. ``transform`` places new points by Nystrom extension.
    """

    def __init__(self, n_components=_DIFF["components"], alpha=_DIFF["alpha"], t=_DIFF["t"],
                 n_neighbors=_DIFF["neighbors"], epsilon=_DIFF["bandwidth"], random_state=_DIFF["seed"]):
        self.n_components = n_components
        self.alpha = alpha
        self.t = t
        self.n_neighbors = n_neighbors
        self.epsilon = epsilon
        self.random_state = random_state

    _PARAMS = ("n_components", "alpha", "t", "n_neighbors", "epsilon", "random_state")

    def get_params(self, deep=True):
        """The constructor parameters as a dict."""
        return {k: getattr(self, k) for k in self._PARAMS}

    def set_params(self, **params):
        """Set constructor parameters; unknown names raise ``ValueError``."""
        for k, v in params.items():
            if k not in self._PARAMS:
                raise ValueError(
                    f"invalid parameter {k!r} for DiffusionMap; valid: {', '.join(self._PARAMS)}")
            setattr(self, k, v)
        return self

    def __repr__(self):
        args = ", ".join(f"{k}={getattr(self, k)!r}" for k in self._PARAMS)
        return f"DiffusionMap({args})"

    def _epsilon(self):
        e = self.epsilon
        if isinstance(e, str):
            if e not in ("auto", "local"):
                raise ValueError(f"epsilon: {e!r}; give a number > 0, 'auto' or 'local'")
            return e
        return repr(float(e))

    def fit(self, X, y=None):
        """Fit the map on the rows of ``X`` (float32 or float64, points x coordinates)."""
        X = _float_array(X, "X", 2)
        rs = self.random_state
        if rs is None:
            rs = _DIFF["seed"]
        if not isinstance(rs, (int, _np.integer)):
            raise ValueError(f"random_state: {rs!r}; give an int >= 0 (every run is seeded)")
        model, coords, eigenvalues, summary = _native.diffusion_fit(
            X, int(self.n_components), float(self.alpha), float(self.t), self._epsilon(),
            None if self.n_neighbors is None else int(self.n_neighbors), int(rs))
        self.model_ = model
        self.embedding_ = coords
        self.eigenvalues_ = eigenvalues
        self.summary_ = _json.loads(summary)
        self.epsilon_ = self.summary_["epsilon"]
        self.n_features_in_ = X.shape[1]
        return self

    def fit_transform(self, X, y=None):
        """Fit on ``X`` and return its diffusion coordinates (points x n_components)."""
        return self.fit(X).embedding_

    def transform(self, X):
        """Diffusion coordinates of new points by Nystrom extension of the fitted map."""
        if not hasattr(self, "model_"):
            raise ValueError("this DiffusionMap is not fitted yet; call fit first")
        return self.model_.extend(_float_array(X, "X", 2))

    def __getstate__(self):
        state = self.__dict__.copy()
        if "model_" in state:
            state["model_"] = state["model_"].to_json()
        return state

    def __setstate__(self, state):
        if "model_" in state:
            state["model_"] = _native.FittedMap.from_json(state["model_"])
        self.__dict__.update(state)


def intrinsic_dimension(X, methods=None, bootstrap=_DIM["bootstrap"], random_state=_DIM["seed"],
                        *, max_points=_DIM["max_points"]):
    """Intrinsic dimension of the rows of ``X`` by the library's suite.

    ``methods``: a list or comma-separated string of ``kmeans``, ``twonn``, ``mle``,
    ``correlation``, ``local_pca`` (default all). ``bootstrap``: resamples per 95 % interval
    (0: none). Returns a dict shaped like ``beatfold dimension --json``: ``n``,
    ``ambient_dim``, ``estimates`` (each ``{"d", "ci95", "curve"}``), ``scale_curve``,
    ``noise_scale``, ``notice``, ...
    """
    X = _float_array(X, "X", 2)
    if methods is not None and not isinstance(methods, str):
        methods = ",".join(methods)
    return _json.loads(_native.intrinsic_dimension(X, methods, int(bootstrap), int(random_state),
                                                   int(max_points)))


def rhythm(rr_s, labels=None, beat_times_s=None, *, window=None, step=None, lead=None,
           fs_hz=None, **params):
    """Rhythm measures of RR intervals ``rr_s`` (seconds), or of a recording.

    Given a path (``str`` or ``os.PathLike``), the recording is read, its beats detected with the
    analysis parameters (``**params``: configuration keys; ``lead``, ``fs_hz`` as in
    :func:`read_record`), and the result is the content of ``beatfold rhythm --json``: the RR
    measures below plus ``record``, the irregular-rhythm ``screen`` (with its atrial-activity
    veto from the signal) and the record ``verdict`` (a research label, not a diagnosis).

    Given RR intervals: ``labels`` has one beat label per beat (``len(rr_s) + 1``; only intervals
    between two ``N`` beats count as NN); ``beat_times_s`` the beat times (``len(rr_s) + 1``; by
    default the cumulative sum of ``rr_s``). The result has the keys of ``beatfold rhythm
    --json`` that need only the RR series (``variability``, ``poincare``, ``sample_entropy``,
    ``windows``, ``notice``) and a ``screen`` computed from the RR series alone.

    ``window``/``step``: sliding windows such as ``"5m"`` (default), ``"300s"``, ``"128b"``;
    the step defaults to half the window.
    """
    if isinstance(rr_s, (str, _os.PathLike)):
        return _json.loads(_native.rhythm_of_record(
            _os.fspath(rr_s), _config(params), None if lead is None else str(lead), fs_hz,
            window, step))
    if params or lead is not None or fs_hz is not None:
        raise ValueError("lead, fs_hz and analysis parameters apply to a recording, not to RR "
                         "intervals")
    rr = _float_array(rr_s, "rr_s", 1)
    if labels is not None and not isinstance(labels, str):
        labels = "".join(str(c) for c in labels)
    bt = None if beat_times_s is None else _float_array(beat_times_s, "beat_times_s", 1)
    return _json.loads(_native.rhythm(rr, labels, bt, window, step))


def analyze(path, out_dir, *, lead=None, fs_hz=None, annotations=None, **params):
    """Run the whole chain on the recording at ``path`` and write the report into ``out_dir``.

    Keyword parameters are the analysis configuration's keys. Returns the content of
    ``summary.json`` (which carries the research-use ``notice``).
    """
    return _json.loads(_native.analyze(
        str(path), str(out_dir), _config(params), None if lead is None else str(lead), fs_hz,
        None if annotations is None else str(annotations)))
