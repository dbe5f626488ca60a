"""Frame features and the emission model of the segmenter.

Features are relative, so that a device's gain and response and the noise floor
of one recording largely cancel: the log of each envelope is centred on its 20th
percentile (a frame between sounds even at 200 bpm, when sounds fill half the
cycle) and scaled by the spread up to its 97th percentile, per recording. The
emission model is a multinomial logistic regression on those features and their
squares (a discriminative emission in the manner of Springer
et al. 2016); its class posterior divided by the class prior gives the scaled
likelihood the hidden semi-Markov model needs.

Public API
----------
FEATURE_NAMES
frame_features
    ``(T, F)`` feature matrix of a conditioned signal.
EmissionModel
    Fitted weights with ``log_likelihood`` and ``posterior``; ``load``/``save``.
fit_emission_model
    Fit the model on labelled frames (used by ``bench/train_segmenter.py``).
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources
from pathlib import Path

import numpy as np
from scipy.optimize import minimize
from scipy.special import log_softmax

from eddyphone.condition import median, percentiles
from eddyphone.envelope import Envelopes
from eddyphone.errors import InputError

FEATURE_NAMES = ("log_homomorphic", "log_hilbert", "shannon", "log_low_band",
                 "log_mid_band", "slope_homomorphic", "pitch_tilt")
#: File (in ``eddyphone/data``) of the shipped emission model.
DEFAULT_MODEL = "segmenter_emissions.json"
_TINY = 1e-12


def frame_features(env: Envelopes) -> np.ndarray:
    """Relative features of each frame.

    Parameters
    ----------
    env : Envelopes
        Envelopes of the conditioned signal.

    Returns
    -------
    ndarray, shape (T, len(FEATURE_NAMES))
    """
    raw = np.stack([
        np.log(env.homomorphic + _TINY),
        np.log(env.hilbert + _TINY),
        env.shannon,
        np.log(env.low_band + _TINY),
        np.log(env.mid_band + _TINY),
    ], axis=1)
    floor, p97 = percentiles(raw.T, (20.0, 97.0))
    spread = p97 - floor
    rel = (raw - floor) / np.where(spread > 1e-9, spread, 1.0)
    homo = rel[:, 0]
    slope = np.gradient(homo) if len(homo) > 1 else np.zeros_like(homo)
    # Mid- over low-band level, relative to its median over the loud frames: the
    # loud frames hold both S1 and S2, so the higher-pitched sound (S2, common
    # practice) lands above zero and the lower-pitched below, whatever the device.
    tilt = raw[:, 4] - raw[:, 3]
    loud = homo > 0.5
    centre = median(tilt[loud]) if np.count_nonzero(loud) >= 5 else median(tilt)
    tilt = np.clip(tilt - centre, -3.0, 3.0)
    return np.concatenate([rel, slope[:, None], tilt[:, None]], axis=1)


def _expand(features: np.ndarray) -> np.ndarray:
    f = np.clip(features, -6.0, 6.0)
    return np.concatenate([f, f * f], axis=1)


@dataclass(frozen=True, eq=False)
class EmissionModel:
    """Multinomial logistic regression over expanded frame features.

    Attributes
    ----------
    weights : ndarray, shape (N, 2F)
    bias : ndarray, shape (N,)
    log_prior : ndarray, shape (N,)
        Log class frequencies in the training frames.
    feature_names : tuple of str
    info : dict
        Provenance (training set, seeds, sizes, accuracy).
    """

    weights: np.ndarray
    bias: np.ndarray
    log_prior: np.ndarray
    feature_names: tuple[str, ...] = FEATURE_NAMES
    info: dict = field(default_factory=dict)

    def posterior(self, features: np.ndarray) -> np.ndarray:
        """Class probabilities of each frame, shape (T, N)."""
        return np.exp(self._log_post(features))

    def _log_post(self, features: np.ndarray) -> np.ndarray:
        return log_softmax(_expand(features) @ self.weights.T + self.bias, axis=1)

    def log_likelihood(self, features: np.ndarray) -> np.ndarray:
        """Scaled log likelihood ``log P(state | frame) - log P(state)``, shape (T, N)."""
        return self._log_post(features) - self.log_prior

    def to_dict(self) -> dict:
        """JSON-ready parameters."""
        return {
            "kind": "multinomial_logistic_quadratic",
            "feature_names": list(self.feature_names),
            "weights": np.round(self.weights, 6).tolist(),
            "bias": np.round(self.bias, 6).tolist(),
            "log_prior": np.round(self.log_prior, 6).tolist(),
            "info": self.info,
        }

    def save(self, path: str | Path) -> Path:
        """Write the parameters as JSON."""
        path = Path(path)
        path.write_text(json.dumps(self.to_dict(), indent=1) + "\n", encoding="utf-8")
        return path

    @classmethod
    def load(cls, path: str | Path | None = None) -> EmissionModel:
        """Read parameters from ``path`` (the shipped model by default; read once)."""
        if path is None:
            return _shipped_model()
        return cls._read(path)

    @classmethod
    def _read(cls, path: str | Path | None) -> EmissionModel:
        try:
            if path is None:
                text = resources.files("eddyphone").joinpath("data", DEFAULT_MODEL).read_text(
                    encoding="utf-8")
                where = f"eddyphone/data/{DEFAULT_MODEL}"
            else:
                text = Path(path).read_text(encoding="utf-8")
                where = str(path)
            data = json.loads(text)
        except (OSError, ValueError, ModuleNotFoundError) as exc:
            raise InputError(str(path or DEFAULT_MODEL), f"cannot read the emission model ({exc})",
                             "reinstall eddyphone or rerun bench/train_segmenter.py") from None
        names = tuple(data.get("feature_names", ()))
        if names != FEATURE_NAMES:
            raise InputError(where, f"model features {names} differ from {FEATURE_NAMES}",
                             "retrain the model with bench/train_segmenter.py")
        return cls(np.asarray(data["weights"], float), np.asarray(data["bias"], float),
                   np.asarray(data["log_prior"], float), names, dict(data.get("info", {})))


@lru_cache(maxsize=1)
def _shipped_model() -> EmissionModel:
    model = EmissionModel._read(None)
    for array in (model.weights, model.bias, model.log_prior):
        array.setflags(write=False)
    return model


def fit_emission_model(features: np.ndarray, labels: np.ndarray, *, n_states: int = 4,
                       l2: float = 1e-3, sample_weight: np.ndarray | None = None,
                       info: dict | None = None) -> EmissionModel:
    """Fit the emission model by penalised maximum likelihood (L-BFGS).

    Parameters
    ----------
    features : ndarray, shape (T, F)
        Frame features (see :func:`frame_features`), frames of many recordings stacked.
    labels : ndarray of int, shape (T,)
        State index of each frame (0 S1, 1 systole, 2 S2, 3 diastole).
    l2 : float
        Ridge penalty on the weights (not the bias), per frame.
    sample_weight : ndarray, optional
        Weight of each frame (e.g. to balance recordings of different length).
    info : dict, optional
        Provenance stored with the model.

    Returns
    -------
    EmissionModel
    """
    z = _expand(np.asarray(features, float))
    y = np.asarray(labels, int)
    n, k = z.shape
    w = np.ones(n) if sample_weight is None else np.asarray(sample_weight, float)
    w = w / w.sum()
    onehot = np.eye(n_states)[y]

    def loss(theta: np.ndarray) -> tuple[float, np.ndarray]:
        wt = theta[: n_states * k].reshape(n_states, k)
        b = theta[n_states * k:]
        lp = log_softmax(z @ wt.T + b, axis=1)
        value = -np.sum(w * np.sum(onehot * lp, axis=1)) + 0.5 * l2 * np.sum(wt * wt)
        resid = (np.exp(lp) - onehot) * w[:, None]
        grad_w = resid.T @ z + l2 * wt
        grad_b = resid.sum(axis=0)
        return float(value), np.concatenate([grad_w.ravel(), grad_b])

    theta0 = np.zeros(n_states * k + n_states)
    res = minimize(loss, theta0, jac=True, method="L-BFGS-B", options={"maxiter": 500})
    wt = res.x[: n_states * k].reshape(n_states, k)
    b = res.x[n_states * k:]
    prior = np.array([np.sum(w[y == s]) for s in range(n_states)])
    return EmissionModel(wt, b, np.log(np.clip(prior, 1e-9, None)), FEATURE_NAMES,
                         dict(info or {}))


def adapt_to_recording(loglik: np.ndarray, feats: np.ndarray, starts: np.ndarray, ends: np.ndarray,
             states: np.ndarray, weight: float) -> np.ndarray:
    """Mix the shipped emissions with Gaussians fitted to this recording's first decoding.

    One step of unsupervised adaptation: each state's frames (as first decoded) give a
    diagonal Gaussian over the features; its class posterior, divided by the state
    frequencies, is averaged (in the log domain, with ``weight``) with the shipped
    model. A device or noise the training never saw moves the features; the
    recording's own statistics follow them.
    """
    lab = np.repeat(states, ends - starts)
    n = loglik.shape[1]
    counts = np.bincount(lab, minlength=n)
    if np.any(counts < 10):
        return loglik
    onehot = np.eye(n)[lab]  # (T, N)
    mu = (onehot.T @ feats) / counts[:, None]  # (N, F)
    var = (onehot.T @ feats ** 2) / counts[:, None] - mu ** 2 + 0.05
    # -0.5 * sum_f ((x - mu)^2 / var + log var), expanded into matrix products
    ll = -0.5 * ((feats ** 2) @ (1.0 / var).T - 2.0 * feats @ (mu / var).T
                 + np.sum(mu ** 2 / var + np.log(var), axis=1))
    prior = np.log(counts / counts.sum())
    post = ll + prior
    top = post.max(axis=1, keepdims=True)
    post -= top + np.log(np.exp(post - top).sum(axis=1, keepdims=True))
    return (1.0 - weight) * loglik + weight * (post - prior)
