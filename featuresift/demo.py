"""Invented demo scenario: which tests should a grain-receiving lab run on wheat lots?

A grain-receiving laboratory takes a sample of every incoming wheat lot and must decide,
before unloading, whether the lot meets **milling grade**. Some readings are already on
hand (moisture, test weight, grain temperature from the intake probe), some are cheap
visual checks, some are laboratory tests with a real price per lot, and one is an
expensive **mycotoxin panel** that returns four toxins for one price. Which tests are
worth paying for?

Everything here is invented for the demo: the data come from a seeded generator built
on a plausible (not agronomically validated) latent rule, and the prices are made up.

* :func:`make_grain_lots` — a reproducible table of lots (ID, target, 26 measurements).
* :data:`GRAIN_COSTS` — the invented price list, in the YAML ``costs`` schema.
* :data:`GRAIN_CONFIG` — the run configuration, in the YAML schema of ``featuresift run``.
* :func:`write_demo` — writes ``grain_lots.csv`` and ``grain_lab.yaml`` into a folder.

Run ``python -m featuresift.demo examples/`` to remake the shipped example files.

How the target is made
----------------------
Latent lot properties (rain at harvest, fusarium infection, sprouting, protein) drive
the measurements. A lot's milling-grade propensity adds up, on a logit scale, the effects
of protein (more is better), falling number (sprout damage is bad), DON (a fusarium
toxin), test weight and moisture, plus logistic noise; ``meets_milling_grade`` is 1 when
it is positive. Zearalenone follows the same fungus as DON and so is correlated with it,
but only DON enters the rule. Cheap proxies carry part of the same information: the
visual count of fusarium-damaged kernels tracks DON, the percentage of sprouted kernels
tracks falling number, NIR hardness tracks SKCS hardness, wet gluten and Zeleny
sedimentation track protein. Four columns are pure noise (intake logistics).

Missing values: a few percent, missing completely at random in ``colour_index`` and
``broken_kernels_pct``; missing at random in ``skcs_hardness_index`` (more often for wet
lots, which the single-kernel instrument handles badly) and in ``gluten_index`` (more
often for lots with high foreign material).
"""

from __future__ import annotations

import copy
import os
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import yaml

__all__ = [
    "GRAIN_COSTS",
    "GRAIN_CONFIG",
    "GRAIN_TARGET",
    "MYCOTOXIN_PANEL",
    "NOISE_COLUMNS",
    "make_grain_lots",
    "write_demo",
]

GRAIN_TARGET = "meets_milling_grade"
"""Name of the binary target column."""

MYCOTOXIN_PANEL = ("don_ppm", "zearalenone_ppb", "ochratoxin_a_ppb", "aflatoxin_b1_ppb")
"""The four values returned by the one-price mycotoxin panel."""

NOISE_COLUMNS = ("truck_wait_min", "intake_hour", "sample_bag_weight_g", "lab_humidity_pct")
"""Columns unrelated to the target by construction."""

GRAIN_COSTS: dict = {
    "unit": "EUR per lot (invented for the demo)",
    "features": {
        # Already on hand from the intake probe and scale: free.
        "moisture_pct": 0.0,
        "test_weight_kg_hl": 0.0,
        "grain_temp_c": 0.0,
        # Intake logistics, recorded anyway (and useless for grading).
        "truck_wait_min": 0.0,
        "intake_hour": 0.0,
        "lab_humidity_pct": 0.0,
        "sample_bag_weight_g": 0.3,
        # Quick visual and bench checks.
        "odour_flag": 0.2,
        "visual_grade_score": 0.5,
        "foreign_material_pct": 1.0,
        "broken_kernels_pct": 1.0,
        "colour_index": 1.5,
        "nir_hardness_index": 1.5,
        "fusarium_damaged_kernels": 2.0,
        "sprouted_kernels_pct": 2.0,
        # Laboratory tests.
        "protein_nir_pct": 6.0,
        "ash_pct": 9.0,
        "skcs_hardness_index": 10.0,
        "zeleny_sedimentation_ml": 11.0,
        "falling_number_s": 12.0,
        "wet_gluten_pct": 14.0,
        "gluten_index": 15.0,
    },
    "panels": {
        "mycotoxin_panel": {"cost": 48.0, "features": list(MYCOTOXIN_PANEL)},
    },
}
"""Invented price list (EUR per lot) in the YAML ``costs`` schema; not real lab prices."""

GRAIN_CONFIG: dict = {
    "data": {"path": "grain_lots.csv", "target": GRAIN_TARGET, "exclude": ["lot_id"]},
    "costs": GRAIN_COSTS,
    "budget": 30.0,
    "model": {
        "estimator": "sklearn.linear_model.LogisticRegression",
        "params": {"max_iter": 2000},
        "preprocessing": ["impute_median", "scale"],
    },
    "cv": {"folds": 5, "repeats": 1, "stratified": True, "shuffle": True, "seed": 0},
    "scoring": "roc_auc",
    "objective": {"name": "score"},
    "strategy": {"name": "forward", "options": {"tol": 0.002}},
    "seed": 0,
    "n_jobs": 1,
    "output": {"folder": "results/grain_lab"},
}
"""The demo run configuration (the content of ``examples/grain_lab.yaml``)."""

_COLUMNS = (
    "moisture_pct", "test_weight_kg_hl", "grain_temp_c",
    "visual_grade_score", "foreign_material_pct", "broken_kernels_pct", "odour_flag",
    "colour_index", "fusarium_damaged_kernels", "sprouted_kernels_pct", "nir_hardness_index",
    "protein_nir_pct", "falling_number_s", "gluten_index", "skcs_hardness_index",
    "wet_gluten_pct", "zeleny_sedimentation_ml", "ash_pct",
    *MYCOTOXIN_PANEL,
    *NOISE_COLUMNS,
)


def _logistic(z: np.ndarray) -> np.ndarray:
    return 1.0 / (1.0 + np.exp(-z))


def make_grain_lots(n_lots: int = 1500, seed: int = 0) -> pd.DataFrame:
    """Generate an invented table of incoming wheat lots.

    Parameters
    ----------
    n_lots : int, default=1500
        Number of lots (rows).
    seed : int, default=0
        Seed of the random generator; the same seed gives the same table.

    Returns
    -------
    pandas.DataFrame
        Columns ``lot_id`` (string), ``meets_milling_grade`` (0/1) and 26 candidate
        measurements (see the module notes), some with missing values.

    Examples
    --------
    >>> lots = make_grain_lots(n_lots=200, seed=1)
    >>> lots.shape
    (200, 28)
    >>> sorted(set(lots["meets_milling_grade"]))
    [0, 1]
    """
    n_lots = int(n_lots)
    if n_lots < 10:
        raise ValueError(f"n_lots must be at least 10, got {n_lots}")
    rng = np.random.default_rng(seed)
    n = n_lots

    # Latent lot properties.
    rain = rng.gamma(2.0, 0.5, n)  # rain at harvest, arbitrary units, mean 1
    fusarium = 0.7 * (rain - 1.0) + rng.normal(0.0, 0.8, n)  # infection severity
    sprout = np.clip(0.6 * (rain - 1.0) + rng.normal(0.0, 0.6, n), -1.5, None)
    protein = np.clip(rng.normal(12.0, 1.3, n), 8.5, 16.5)
    hardness = rng.normal(62.0, 12.0, n)  # true kernel hardness (SKCS scale)
    shrivel = rng.normal(0.0, 1.0, n)  # poor kernel fill

    # On hand.
    moisture = np.clip(13.0 + 0.6 * (rain - 1.0) + rng.normal(0.0, 0.9, n), 9.5, 18.5)
    test_weight = (
        78.0 - 1.6 * shrivel - 0.9 * np.clip(fusarium, 0, None) - 0.4 * (moisture - 13.0)
        + rng.normal(0.0, 0.8, n)
    )
    grain_temp = rng.normal(17.0, 5.0, n) + 0.8 * (moisture - 13.0)

    # Quick visual and bench checks.
    foreign = rng.gamma(1.5, 0.5, n)
    broken = rng.gamma(2.0, 0.8, n) + 0.3 * np.clip(-shrivel, 0, None)
    fdk = np.round(np.clip(np.exp(1.0 + 0.75 * fusarium + rng.normal(0.0, 0.45, n)), 0, 60))
    sprouted = np.clip(1.5 + 2.0 * sprout + rng.normal(0.0, 0.9, n), 0.0, None).round(1)
    nir_hardness = 0.85 * hardness + 8.0 + rng.normal(0.0, 6.0, n)
    colour = 62.0 - 2.5 * (rain - 1.0) - 0.08 * fdk + rng.normal(0.0, 2.0, n)
    odour = (rng.random(n) < _logistic(-4.0 + 0.9 * (moisture - 13.0)
                                       + 0.12 * (grain_temp - 17.0))).astype(int)
    visual = np.clip(
        np.round(3.2 + 0.35 * (test_weight - 78.0) - 0.06 * fdk - 0.25 * foreign
                 - 0.12 * broken + rng.normal(0.0, 0.6, n)),
        1, 5,
    ).astype(int)

    # Laboratory tests.
    protein_nir = protein + rng.normal(0.0, 0.25, n)
    wet_gluten = 2.5 * protein - 2.5 + rng.normal(0.0, 1.0, n)
    gluten_index = np.clip(rng.normal(80.0, 10.0, n) - 6.0 * np.clip(sprout, 0, None), 20, 100)
    zeleny = 4.0 * protein - 12.0 + 0.15 * (gluten_index - 80.0) + rng.normal(0.0, 4.0, n)
    skcs = hardness + rng.normal(0.0, 2.0, n)
    falling_number = np.clip(
        360.0 - 85.0 * sprout + rng.normal(0.0, 35.0, n), 62.0, 500.0
    ).round()
    ash = 1.6 - 0.03 * (test_weight - 78.0) + rng.normal(0.0, 0.1, n)

    # Mycotoxin panel (one price, four values).
    don = np.exp(-0.9 + 1.0 * fusarium + rng.normal(0.0, 0.35, n))
    zearalenone = np.exp(3.2 + 0.8 * fusarium + rng.normal(0.0, 0.6, n))
    ochratoxin = np.exp(-0.3 + 0.25 * (moisture - 13.0) + rng.normal(0.0, 0.7, n))
    aflatoxin = np.exp(-1.2 + rng.normal(0.0, 0.8, n))

    # Noise: intake logistics.
    truck_wait = rng.gamma(2.0, 15.0, n).round()
    intake_hour = rng.integers(6, 20, n)
    bag_weight = rng.normal(1000.0, 25.0, n).round(1)
    humidity = rng.normal(45.0, 8.0, n).round(1)

    # The milling-grade rule (logit scale) with logistic noise.
    propensity = (
        1.3 * (protein - 11.5)
        + 0.012 * (falling_number - 250.0)
        - 1.6 * np.log(don / 1.25)
        + 0.35 * (test_weight - 76.0)
        - 0.6 * (moisture - 14.0)
        - 3.0
        + rng.logistic(0.0, 1.15, n)
    )
    target = (propensity > 0).astype(int)

    values = {
        "moisture_pct": moisture.round(1),
        "test_weight_kg_hl": test_weight.round(1),
        "grain_temp_c": grain_temp.round(1),
        "visual_grade_score": visual,
        "foreign_material_pct": foreign.round(2),
        "broken_kernels_pct": broken.round(2),
        "odour_flag": odour,
        "colour_index": colour.round(1),
        "fusarium_damaged_kernels": fdk.astype(int),
        "sprouted_kernels_pct": sprouted,
        "nir_hardness_index": nir_hardness.round(1),
        "protein_nir_pct": protein_nir.round(2),
        "falling_number_s": falling_number.astype(int),
        "gluten_index": gluten_index.round(0),
        "skcs_hardness_index": skcs.round(1),
        "wet_gluten_pct": wet_gluten.round(1),
        "zeleny_sedimentation_ml": zeleny.round(0),
        "ash_pct": ash.round(3),
        "don_ppm": don.round(3),
        "zearalenone_ppb": zearalenone.round(1),
        "ochratoxin_a_ppb": ochratoxin.round(2),
        "aflatoxin_b1_ppb": aflatoxin.round(3),
        "truck_wait_min": truck_wait.astype(int),
        "intake_hour": intake_hour.astype(int),
        "sample_bag_weight_g": bag_weight,
        "lab_humidity_pct": humidity,
    }
    frame = pd.DataFrame({"lot_id": [f"L{seed % 100:02d}-{i + 1:05d}" for i in range(n)]})
    frame[GRAIN_TARGET] = target
    for name in _COLUMNS:
        frame[name] = values[name]

    # Missing values: MCAR in two columns, MAR (driven by observed columns) in two more.
    for name, rate in (("colour_index", 0.03), ("broken_kernels_pct", 0.02)):
        frame[name] = frame[name].astype(float).mask(rng.random(n) < rate)
    wet = _logistic(-3.2 + 1.2 * (moisture - 14.0))
    frame["skcs_hardness_index"] = frame["skcs_hardness_index"].mask(rng.random(n) < wet)
    dirty = _logistic(-3.6 + 1.3 * (foreign - 1.0))
    frame["gluten_index"] = frame["gluten_index"].mask(rng.random(n) < dirty)
    return frame


def _dump_yaml(config: dict) -> str:
    return yaml.safe_dump(config, sort_keys=False, default_flow_style=False, allow_unicode=True)


def write_demo(folder: str | os.PathLike, n_lots: int = 1500, seed: int = 0) -> list[Path]:
    """Write the demo data (``grain_lots.csv``) and configuration (``grain_lab.yaml``).

    The configuration is :data:`GRAIN_CONFIG` dumped with :func:`yaml.safe_dump`. A
    ``grain_lab.yaml`` already in the folder that holds the same configuration is left
    as it is, so a commented copy (like the shipped ``examples/grain_lab.yaml``) survives.

    Parameters
    ----------
    folder : path
        Output folder (created if needed).
    n_lots : int, default=1500
        Number of lots to generate.
    seed : int, default=0
        Generator seed.

    Returns
    -------
    list of pathlib.Path
        The two files written.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     [p.name for p in write_demo(d, n_lots=50)]
    ['grain_lots.csv', 'grain_lab.yaml']
    """
    from featuresift.outputs import refuse_symlink, write_files

    out = Path(folder)
    data_path = out / "grain_lots.csv"
    config_path = out / "grain_lab.yaml"
    refuse_symlink(config_path)  # before reading it: a link is never followed
    files = {"grain_lots.csv": make_grain_lots(n_lots=n_lots, seed=seed).to_csv(
        index=False, lineterminator="\n")}
    if not _holds_config(config_path, GRAIN_CONFIG):
        files["grain_lab.yaml"] = _dump_yaml(copy.deepcopy(GRAIN_CONFIG))
    write_files(out, files)  # atomic, never through a symbolic link
    return [data_path, config_path]


def _holds_config(path: Path, config: dict) -> bool:
    """Whether ``path`` exists and its YAML content equals ``config`` (comments aside)."""
    try:
        return yaml.safe_load(path.read_text(encoding="utf-8")) == config
    except (OSError, UnicodeDecodeError, yaml.YAMLError):
        return False


if __name__ == "__main__":
    target_folder = sys.argv[1] if len(sys.argv) > 1 else "examples"
    for written in write_demo(target_folder):
        print(written)
