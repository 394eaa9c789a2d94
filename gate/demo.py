"""The invented demo scenario: a water utility scoring pipe segments for leaks.

Every number here is made up and generated with a fixed seed; nothing is a check value.

The story (DESIGN.md): a utility scores its pipe segments nightly for likely leaks from
acoustic-sensor features; a positive is a leak confirmed by a field crew (about 2 % of
segments). The segments lie in three districts. Three models score the same evaluation set:

- ``production``: the model in service now;
- ``candidate_better``: a retrained model that separates leaks better everywhere
  (ROC AUC about +0.025, recall at a 5 % false-positive rate several points higher in each
  district);
- ``candidate_regressing``: a retrained model that looks as good as production overall (ROC AUC
  within about 0.01, recall at FPR 5 % about the same) because it is better in two
  districts, but is clearly worse in :data:`REGRESSING_DISTRICT` (recall at FPR 5 % about 15-20
  points below production there): the failure a per-district check exists to catch.

How the data are made. Each segment has a district, a pipe material, an age and a length; the
leak probability is a logistic function of those (older cast-iron pipes leak more), with the
intercept solved so that the mean probability is :data:`PREVALENCE`, and the label is drawn from
it. Each model's latent score is ``d * label + 0.4 * prior_risk + sqrt(rho) * shared +
sqrt(1 - rho) * own_noise``, where ``shared`` is one standard-normal draw per segment common to
all models (the acoustic signal they all listen to, rho = 0.75) and ``d`` the model's separation
(per district for the regressing model). The score is ``sigmoid(-3 + 1.1 * latent)`` rounded to
3 decimals: a probability in [0, 1] with ties, as deployed models often report.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
from numpy.typing import NDArray

from gate.errors import TableError

if TYPE_CHECKING:  # pragma: no cover
    import pandas as pd

# Any seed tells the same story; this one was picked among the first few because its sample
# prevalence is exactly 2 % (400 leaks in 20 000 segments).
DEFAULT_SEED = 2
N_SEGMENTS = 20_000
PREVALENCE = 0.02

DISTRICTS = ("Hillside", "Riverside", "Old Town")
DISTRICT_SHARES = (0.40, 0.35, 0.25)
REGRESSING_DISTRICT = "Old Town"

MATERIALS = ("cast_iron", "ductile_iron", "pvc", "asbestos_cement")
# Share of each material by district (rows follow DISTRICTS): the old town has the old cast iron.
_MATERIAL_SHARES = np.array(
    [
        [0.15, 0.35, 0.40, 0.10],
        [0.25, 0.30, 0.30, 0.15],
        [0.50, 0.20, 0.10, 0.20],
    ]
)
_AGE_RANGE = np.array([[60, 110], [15, 50], [0, 40], [40, 70]])  # years, by material
_MATERIAL_RISK = np.array([0.6, 0.0, -0.3, 0.4])  # added to the leak log-odds, by material

# Separation of leaks from sound segments on the latent scale, per model.
_SEP_PRODUCTION = 1.5
_SEP_BETTER = 1.75
_SEP_REGRESSING_WEAK = 0.8  # in REGRESSING_DISTRICT
_SEP_REGRESSING_ELSEWHERE = 2.0  # in the other districts: enough to hide the loss in the pooled figures
_SHARED = 0.75  # share of latent noise variance common to all models
_PRIOR_WEIGHT = 0.4  # weight of the (standardized) prior risk in every model's latent score
_SCORE_OFFSET, _SCORE_SLOPE = -3.0, 1.1

FILE_NAMES = {
    "eval_set": "eval-set.csv",
    "production": "production.csv",
    "candidate_better": "candidate-better.csv",
    "candidate_regressing": "candidate-regressing.csv",
}


@dataclass(frozen=True, eq=False)
class DemoScenario:
    """The generated scenario as pandas DataFrames.

    Attributes
    ----------
    eval_set : id, label (1 = confirmed leak), district, material, age_years, length_m.
    production, candidate_better, candidate_regressing : score files with id, label, score,
        district (rows in the same order as ``eval_set``).
    seed : the seed it was generated with.
    """

    eval_set: pd.DataFrame
    production: pd.DataFrame
    candidate_better: pd.DataFrame
    candidate_regressing: pd.DataFrame
    seed: int

    def frames(self) -> dict[str, pd.DataFrame]:
        """The four frames by the keys of :data:`FILE_NAMES`."""
        return {
            "eval_set": self.eval_set,
            "production": self.production,
            "candidate_better": self.candidate_better,
            "candidate_regressing": self.candidate_regressing,
        }


def _sigmoid(x: NDArray[np.float64]) -> NDArray[np.float64]:
    return 1.0 / (1.0 + np.exp(-x))


def _solve_intercept(risk: NDArray[np.float64], prevalence: float) -> float:
    """The intercept c with mean(sigmoid(c + risk)) = prevalence, by bisection (monotone in c)."""
    low, high = -30.0, 30.0
    for _ in range(100):
        mid = 0.5 * (low + high)
        if _sigmoid(mid + risk).mean() > prevalence:
            high = mid
        else:
            low = mid
    return 0.5 * (low + high)


def generate_scenario(
    *,
    seed: int = DEFAULT_SEED,
    n_segments: int = N_SEGMENTS,
    production_separation: dict[str, float] | None = None,
) -> DemoScenario:
    """Generate the demo scenario; the same seed and size always give the same frames.

    Parameters
    ----------
    seed : seed of ``numpy.random.default_rng``.
    n_segments : number of pipe segments (rows); at least 100.
    production_separation : optional separation of the production model per district name
        (default the same everywhere); the nightly simulation lowers it in one district.

    Returns
    -------
    DemoScenario
    """
    import pandas as pd

    if n_segments < 100:
        raise ValueError(f"n_segments must be at least 100, got {n_segments}")
    rng = np.random.default_rng(seed)
    n = int(n_segments)

    district = rng.choice(len(DISTRICTS), size=n, p=np.array(DISTRICT_SHARES))
    cumulative = np.cumsum(_MATERIAL_SHARES[district], axis=1)
    cumulative[:, -1] = 1.0  # no float shortfall past the last material
    material = (rng.random(n)[:, None] > cumulative).sum(axis=1)
    low, high = _AGE_RANGE[material, 0], _AGE_RANGE[material, 1]
    age = np.floor(low + rng.random(n) * (high - low)).astype(np.int64)
    length = np.round(np.exp(rng.normal(np.log(80.0), 0.5, size=n)), 1)

    risk = 0.025 * (age - 50) + _MATERIAL_RISK[material] + 0.3 * np.log(length / 80.0)
    intercept = _solve_intercept(risk, PREVALENCE)
    leak = rng.random(n) < _sigmoid(intercept + risk)
    prior = (risk - risk.mean()) / risk.std()
    shared = rng.standard_normal(n)

    def model_scores(separation: NDArray[np.float64] | float) -> NDArray[np.float64]:
        own = rng.standard_normal(n)
        latent = (
            separation * leak
            + _PRIOR_WEIGHT * prior
            + np.sqrt(_SHARED) * shared
            + np.sqrt(1.0 - _SHARED) * own
        )
        return np.round(_sigmoid(_SCORE_OFFSET + _SCORE_SLOPE * latent), 3)

    weak = district == DISTRICTS.index(REGRESSING_DISTRICT)
    sep = np.full(n, _SEP_PRODUCTION)
    for name, value in (production_separation or {}).items():
        sep[district == DISTRICTS.index(name)] = value
    production = model_scores(sep)
    better = model_scores(_SEP_BETTER)
    regressing = model_scores(np.where(weak, _SEP_REGRESSING_WEAK, _SEP_REGRESSING_ELSEWHERE))

    width = max(5, len(str(n)))
    ids = np.array([f"SEG-{i:0{width}d}" for i in range(1, n + 1)], dtype=object)
    labels = leak.astype(np.int64)
    names = np.array(DISTRICTS, dtype=object)[district]

    eval_set = pd.DataFrame(
        {
            "id": ids,
            "label": labels,
            "district": names,
            "material": np.array(MATERIALS, dtype=object)[material],
            "age_years": age,
            "length_m": length,
        }
    )

    def score_frame(scores: NDArray[np.float64]) -> pd.DataFrame:
        return pd.DataFrame({"id": ids, "label": labels, "score": scores, "district": names})

    return DemoScenario(
        eval_set=eval_set,
        production=score_frame(production),
        candidate_better=score_frame(better),
        candidate_regressing=score_frame(regressing),
        seed=seed,
    )


def write_scenario(
    out_dir: str | os.PathLike[str],
    *,
    seed: int = DEFAULT_SEED,
    n_segments: int = N_SEGMENTS,
) -> dict[str, Path]:
    """Generate the scenario and write its four CSV files into ``out_dir`` (created if needed).

    Each file is written atomically; existing demo files are replaced. Returns the paths by the
    keys of :data:`FILE_NAMES`.
    """
    from gate.io import write_frame

    directory = Path(out_dir)
    try:
        directory.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise TableError(
            f"{os.fspath(out_dir)}: cannot create the demo directory ({exc.strerror or exc})"
        ) from None
    scenario = generate_scenario(seed=seed, n_segments=n_segments)
    paths: dict[str, Path] = {}
    for key, frame in scenario.frames().items():
        paths[key] = write_frame(frame, directory / FILE_NAMES[key])
    return paths


# --- a simulated month of nightly runs ---------------------------------------------------------

NIGHTS = 30
DECAY_DISTRICT = "Riverside"
DECAY_START = 10  # first night of the decay (0-based)
DECAY_PER_NIGHT = 0.045  # loss of separation per night in DECAY_DISTRICT from DECAY_START on


def nightly_scores(night: int, *, seed: int = DEFAULT_SEED, n_segments: int = N_SEGMENTS) -> pd.DataFrame:
    """The production model's scores on night ``night`` (0-based) of the simulated month.

    Each night a fresh labelled sample of segments is scored (crews confirm leaks daily). From
    :data:`DECAY_START` on, the model slowly loses separation in :data:`DECAY_DISTRICT` (say a
    sensor firmware change there), by :data:`DECAY_PER_NIGHT` per night: too slow for any single
    night to look alarming at first, which is what trend watching is for.
    """
    if night < 0:
        raise ValueError(f"night must be >= 0, got {night}")
    decay = max(0, night - DECAY_START + 1) * DECAY_PER_NIGHT
    scenario = generate_scenario(
        seed=seed * 1000 + 17 + night,
        n_segments=n_segments,
        production_separation={DECAY_DISTRICT: _SEP_PRODUCTION - decay},
    )
    return scenario.production
