"""The uncertainty model: which inputs of a rig are not exactly known, how they are distributed, and
where each width comes from; the scenario's `[uncertainty]` table that overrides them; and the
samples (one rig design per sample) that carry them through the integrator.

Every width is one standard deviation. A multiplicative factor (convection, capacity, ...) is
lognormal about the scenario's value: a width of 20 % means ln(factor) has a standard deviation
of ln(1.20). The ambient is normal about the scenario's ambient, its width in K. "A factor of about
two" is read as the two-standard-deviation range, x/÷ 2, i.e. a width of sqrt(2) - 1 = 41 %.

After a log fit, the fitted factors (`[uncertainty.posterior]`, written by `fit --write`) are sampled
from the fit's Gaussian in ln(multiplier) (standard errors and correlation from the Jacobian
covariance) in place of their prior.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path

import numpy as np

from ..errors import ScenarioError
from .scenario_table import _Table
from ..units import parse_quantity

SOBOL_SEED = 20261202          # fixed, so that the same scenario gives the same band
SOBOL_TABLE_POINTS = 256       # points per dimension shipped in data/sobol_normals.npz (make_sobol_table)
SOBOL_TABLE_PATH = Path(__file__).resolve().parent.parent / "data" / "sobol_normals.npz"
DEFAULT_CONFIDENCE = 0.9
FACTOR_OF_TWO = np.sqrt(2.0) - 1.0   # ln(1 + w) = ln(2) / 2: x/÷ 2 is the two-sigma range


@dataclass(frozen=True)
class Factor:
    """One uncertain input. width : default one-sigma width, a fraction (multiplicative factors,
    ln-sigma = ln(1 + width)) or K (ambient). rig_field : the Rig field it moves."""
    key: str
    label: str
    rig_field: str
    kind: str            # "lognormal" (a multiplier) or "normal_K" (a shift of a temperature, K)
    width: float
    source: str
    judgement: bool
    measure: str         # what to measure to narrow it


FACTORS = (
    Factor("convection", "air-side convection", "convection_multiplier", "lognormal", 0.20,
           "Churchill and Chu (1975, Int. J. Heat Mass Transfer 18, 1323-1329) compare their vertical-plate "
           "equation with representative data in figures and state no single error figure; the data scatter "
           "about their curve by roughly 10 % (read from their figures, from memory). The tank is not an "
           "isolated isothermal plate (stand, nearby walls, drafts, McAdams' plate correlations for top and "
           "bottom), so the width is raised to 20 %: engineering judgement.", True,
           "a logged session with its cool-down, fitted with `fit`"),
    Factor("oil_side", "tank oil side (stirring by the return jet)", "oil_side_multiplier", "lognormal",
           FACTOR_OF_TWO,
           "engineering judgement: the return jet's stirring of the tank is uncertain by a factor of about two",
           True, "a thermocouple on the tank wall below the oil line during a logged session"),
    Factor("coupling", "pump and valve body coupling", "hardware_coupling_multiplier", "lognormal",
           FACTOR_OF_TWO,
           "engineering judgement: the coupling of the pump and valve bodies to the loop oil (and their "
           "outside area) is uncertain by a factor of about two", True,
           "a thermocouple on the pump body during a logged session"),
    Factor("ambient", "ambient on the day", "ambient_K", "normal_K", 2.0,
           "engineering judgement: the air near the rig on the planned day is known to a few K "
           "(a forecast, a shop with the door open or shut)", True,
           "the air temperature near the tank on the day"),
    Factor("power", "absorbed power of a pull", "power_multiplier", "lognormal", 0.07,
           "engineering judgement: the valve setting and the engine decide the absorbed power to 5-10 %", True,
           "the pressure and flow (or the load cell) during a pull"),
    Factor("capacity", "heat capacity", "capacity_multiplier", "lognormal", 0.05,
           "engineering judgement: oil volume read off a sight glass, hardware mass estimated, and the "
           "specific heat from Cragoe (NBS Misc. Publ. 97) for a generic mineral oil: a few % together", True,
           "the oil volume and the hardware's mass (a logged session with `fit` also measures it)"),
    Factor("emissivity", "tank surface emissivity", "wall_emissivity", "lognormal", 0.10,
           "engineering judgement: the emissivity of a painted or dirty tank (or a plastic one) is known to about "
           "10 % (capped at 1)", True, "the paint's emissivity from its data sheet"),
    Factor("body_emissivity", "pump and valve body emissivity", "hardware_emissivity", "lognormal", 0.60,
           "emissivity tables (Incropera, 6th ed., Table A.11, from memory): painted 0.9-0.98, oxidised cast iron "
           "0.6-0.7, machined cast iron and steel 0.2-0.4, bare aluminium 0.05-0.2 (anodised 0.8). Bare or cast "
           "bodies may be 0.1-0.6 where 0.95 is written: one sigma x/÷ 1.6 (two sigma from 0.95 down to 0.37), "
           "capped at 1; the width is engineering judgement", True,
           "the bodies' finish (painted, cast, machined, bare aluminium) written as hardware.emissivity"),
    Factor("engine_off", "engine-off link of the loop to the tank", "engine_off_multiplier", "lognormal",
           FACTOR_OF_TWO,
           "engineering judgement: the standing loop oil's conduction (Nu_D = 5.78 of still oil in a tube) is a "
           "lower bound, natural convection in hot oil (Ra_D 1e4-1e5) may double it, and the bodies' metal link to "
           "the tank (hardware.engine_off_coupling, a flange's contact with or without a gasket) is uncertain by a "
           "factor of about two", True,
           "thermocouples on the pump body and a hose during a long engine-off wait"),
    Factor("floor", "floor under the tank", "floor_multiplier", "lognormal", FACTOR_OF_TWO,
           "engineering judgement: the floor as a semi-infinite solid of concrete (k = 1.4 W/(m K), Incropera Table "
           "A.3; dry to damp concrete about 0.9-1.8, from memory), taken at the end of the planned session (at least "
           "1 h: 15.8 W/(m^2 K); 8 h gives 5.6), with perfect contact (a ribbed drum bottom, a mat or a pallet give "
           "far less): a factor of about two; no effect on a tank that does not stand on the floor", True,
           "a thermocouple under the tank's bottom, or the fit of a logged cool-down"),
    Factor("dry_shell", "dry shell above the oil line (fin)", "dry_shell_multiplier", "lognormal", 0.30,
           "engineering judgement: the dry sides and lid as a straight fin fed from the oil line (Incropera eq. 3.89) "
           "idealise a uniform outside coefficient, a lid fed only from its edges, and welds and joints that conduct "
           "less than the plate: 30 %", True,
           "a thermocouple on the tank's side above the oil line and on the lid"),
)
FACTOR_BY_KEY = {f.key: f for f in FACTORS}
# A fitted convection multiplier stands for the whole loss to the air on the logged day: the
# emissivities' and the floor's priors are dropped with it.
ABSORBED_BY_FITTED_CONVECTION = {"emissivity", "body_emissivity", "floor", "dry_shell"}


@dataclass(frozen=True)
class Posterior:
    """A fit's Gaussian in ln(multiplier): the factors it fixed, their standard errors and their
    correlation matrix. The centre is the scenario's (fitted) multiplier."""
    keys: tuple
    sd_ln: tuple
    correlation: tuple


@dataclass(frozen=True)
class UncertaintyModel:
    """The widths in use (one sigma; fraction or K by factor), the confidence of the plan, and an
    optional posterior that replaces the prior of the factors it names."""
    enabled: bool = True
    confidence: float = DEFAULT_CONFIDENCE
    widths: dict = field(default_factory=lambda: {f.key: f.width for f in FACTORS})
    posterior: Posterior | None = None

    @property
    def active(self) -> tuple:
        """The factors that vary: width above 0, or fitted. A fitted convection multiplier stands for
        the whole loss to the air on the logged day, radiation included, so the priors of the paths
        it stands for (ABSORBED_BY_FITTED_CONVECTION) are dropped with it."""
        fitted = set(self.posterior.keys) if self.posterior else set()
        absorbed = ABSORBED_BY_FITTED_CONVECTION if "convection" in fitted else set()
        return tuple(f for f in FACTORS if f.key in fitted or (self.widths[f.key] > 0 and f.key not in absorbed))

    @property
    def spreads(self) -> bool:
        return self.enabled and bool(self.active)

    def widened(self, scale: float) -> "UncertaintyModel":
        """Every prior width times scale (the posterior is kept)."""
        return UncertaintyModel(self.enabled, self.confidence, {k: w * scale for k, w in self.widths.items()},
                                self.posterior)

    def table(self) -> list[dict]:
        """The factors, their distributions, widths and sources, for the report and docs/method.md."""
        rows = []
        fitted = dict(zip(self.posterior.keys, self.posterior.sd_ln)) if self.posterior else {}
        active = {f.key for f in self.active}
        for f in FACTORS:
            if f.key not in active:
                absorbed = f.key in ABSORBED_BY_FITTED_CONVECTION and "convection" in fitted
                rows.append({"factor": f.key, "what": f.label, "distribution": "fixed (not sampled)", "sigma": "0",
                             "source": "absorbed by the fitted convection multiplier" if absorbed else f.source})
                continue
            if f.key in fitted:
                width, dist = f"{100 * np.expm1(fitted[f.key]):.1f} %", "lognormal (fit posterior)"
                source = "the log fit's covariance (linearised, Jacobian)"
            else:
                w = self.widths[f.key]
                width = f"{w:g} K" if f.kind == "normal_K" else f"{100 * w:.0f} %"
                dist, source = ("normal" if f.kind == "normal_K" else "lognormal"), f.source
            rows.append({"factor": f.key, "what": f.label, "distribution": dist, "sigma": width,
                         "source": source})
        return rows


def read_uncertainty(raw) -> UncertaintyModel:
    """The `[uncertainty]` table of a scenario (optional). Keys: one per factor ("20 %", or "3 K" for
    ambient), enabled (bool), confidence (0.5 to 0.999), and the sub-table posterior written by a
    fit. Unknown keys are errors."""
    t = _Table(raw, "uncertainty", required=False)
    enabled = t.get("enabled", True)
    if not isinstance(enabled, bool):
        raise ScenarioError(t.key("enabled"), enabled, "true or false")
    confidence = t.number("confidence", DEFAULT_CONFIDENCE, minimum=0.5, maximum=0.999)
    widths = {}
    for f in FACTORS:
        value = t.get(f.key, None)
        if value is None:
            widths[f.key] = f.width
        elif f.kind == "normal_K":
            widths[f.key] = parse_quantity(value, t.key(f.key), "temperature_difference", "K")
        else:
            widths[f.key] = _percent(value, t.key(f.key))
        if not 0.0 <= widths[f.key] <= (30.0 if f.kind == "normal_K" else 3.0):
            raise ScenarioError(t.key(f.key), value, "a width from 0 to 300 %" if f.kind != "normal_K"
                                else "a width from 0 to 30 K")
    posterior = _read_posterior(t.get("posterior", None), t.key("posterior"))
    t.finish()
    return UncertaintyModel(enabled=enabled, confidence=float(confidence), widths=widths, posterior=posterior)


def _percent(value, key: str) -> float:
    if isinstance(value, str) and value.strip().endswith("%"):
        try:
            return float(value.strip()[:-1]) / 100.0
        except ValueError:
            pass
    raise ScenarioError(key, value, 'a width in percent, e.g. "20 %"')


def _read_posterior(raw, path: str) -> Posterior | None:
    if raw is None:
        return None
    t = _Table(raw, path)
    keys = t.get("factors")
    sd = t.get("sd_ln")
    corr = t.get("correlation")
    if not (isinstance(keys, list) and keys and all(k in ("convection", "capacity", "coupling") for k in keys)
            and len(set(keys)) == len(keys)):
        raise ScenarioError(t.key("factors"), keys, 'a list of fitted factors among "convection", "capacity", "coupling"')
    n = len(keys)
    if not (isinstance(sd, list) and len(sd) == n and all(isinstance(v, (int, float)) and 0 <= v <= 3 for v in sd)):
        raise ScenarioError(t.key("sd_ln"), sd, f"{n} standard errors of ln(multiplier), each 0 to 3")
    try:
        matrix = np.array(corr, dtype=float)
        ok = matrix.shape == (n, n) and np.allclose(matrix, matrix.T) and np.allclose(np.diag(matrix), 1.0) \
            and np.all(np.abs(matrix) <= 1.0) and np.linalg.eigvalsh(matrix).min() > -1e-9
    except (TypeError, ValueError):
        ok = False
    if not ok:
        raise ScenarioError(t.key("correlation"), corr, f"a symmetric {n} x {n} correlation matrix (ones on the diagonal)")
    t.finish()
    return Posterior(keys=tuple(keys), sd_ln=tuple(float(v) for v in sd),
                     correlation=tuple(tuple(float(v) for v in row) for row in matrix))


def posterior_table(names_sd_ln: dict, correlation) -> dict:
    """The `[uncertainty.posterior]` table for a calibrated scenario: {factor: sd of ln(multiplier)}
    and their correlation matrix."""
    keys = list(names_sd_ln)
    return {"factors": keys, "sd_ln": [float(f"{names_sd_ln[k]:.4g}") for k in keys],
            "correlation": [[float(f"{v:.4f}") for v in row] for row in np.asarray(correlation, dtype=float)]}


# --- samples ---------------------------------------------------------------------------------------

def standard_normals(model: UncertaintyModel, n: int, seed: int = SOBOL_SEED) -> np.ndarray:
    """(n, k) standard normal points for the k active factors: scrambled Sobol points (n a power of
    two) through the normal quantile function. Read from the shipped table (make_sobol_table) where
    it holds them, else from scipy: the same numbers either way."""
    k = len(model.active)
    if seed == SOBOL_SEED and n <= SOBOL_TABLE_POINTS and 1 <= k <= len(FACTORS):
        return _sobol_table()[f"d{k}"][:n].copy()
    return sobol_normals_from_scipy(k, n, seed)


def sobol_normals_from_scipy(k: int, n: int, seed: int) -> np.ndarray:
    """(n, k) scrambled Sobol points (the first n of the sequence) through the normal quantile function."""
    from scipy.stats import norm, qmc   # here, not at the top: a second of start-up for every command
    points = qmc.Sobol(d=k, scramble=True, seed=seed).random_base2(int(np.ceil(np.log2(n))))[:n]
    return norm.ppf(np.clip(points, 1e-12, 1.0 - 1e-12))


@lru_cache(maxsize=1)
def _sobol_table() -> dict[str, np.ndarray]:
    with np.load(SOBOL_TABLE_PATH) as table:
        return {name: table[name] for name in table.files}


def factor_values(model: UncertaintyModel, z: np.ndarray) -> dict:
    """The factors' values for standard normal points z (n, k), columns in `model.active` order:
    {key: multiplier (n,)} for lognormal factors, {"ambient": shift K (n,)}."""
    active = model.active
    values = {}
    fitted = model.posterior.keys if model.posterior else ()
    if fitted:
        columns = [i for i, f in enumerate(active) if f.key in fitted]
        chol = np.linalg.cholesky(np.asarray(model.posterior.correlation) + 1e-12 * np.eye(len(fitted)))
        correlated = z[:, columns] @ chol.T
        for j, key in enumerate(fitted):
            values[key] = np.exp(model.posterior.sd_ln[j] * correlated[:, j])
    for i, f in enumerate(active):
        if f.key in fitted:
            continue
        w = model.widths[f.key]
        values[f.key] = w * z[:, i] if f.kind == "normal_K" else np.exp(np.log1p(w) * z[:, i])
    return values


def sample_rig(rig, values: dict, index=None):
    """The rig with the factors' values applied (one design per sample), about the rig's own values.
    index : optional (M,) sample of each design (when the rig has M designs built from the samples)."""
    def pick(v):
        return v if index is None else v[index]
    changes = {}
    for key, v in values.items():
        f = FACTOR_BY_KEY[key]
        if f.kind == "normal_K":
            changes["ambient_K"] = np.asarray(rig.ambient_K, dtype=float) + pick(v)
        elif f.rig_field in ("wall_emissivity", "hardware_emissivity"):
            changes[f.rig_field] = np.minimum(getattr(rig, f.rig_field) * pick(v), 1.0)
        else:
            changes[f.rig_field] = np.asarray(getattr(rig, f.rig_field), dtype=float) * pick(v)
    return rig.with_changes(**changes)


FITTED_MULTIPLIERS = {"convection": "convection_multiplier", "capacity": "capacity_multiplier",
                      "coupling": "hardware_coupling_multiplier"}


def posterior_from_fit(result) -> dict | None:
    """The `[uncertainty.posterior]` table from a log fit (a calibrate.FitResult): the standard errors
    of ln(multiplier) of each fitted multiplier, from its 95 % interval (half-width / t(0.975, n - p)),
    and the correlation of convection and capacity (the fit reports that one; any other pair is taken
    as uncorrelated). Where the residuals are correlated in time (lag-1 autocorrelation rho > 0), the
    standard errors are widened by sqrt((1 + rho) / (1 - rho)), the variance inflation of the mean of
    an AR(1) series (e.g. Box, Jenkins and Reinsel, Time Series Analysis), since the fit's intervals
    assume independent noise. A factor whose standard error is not below its prior width keeps its
    prior. None where the fit gave no intervals or narrowed nothing."""
    names = {key: name for key, name in FITTED_MULTIPLIERS.items() if name in result.ci95}
    if not names or any(result.ci95[name] is None for name in names.values()):
        return None
    from scipy import stats
    t = float(stats.t.ppf(0.975, result.n_points - result.n_parameters))
    rho = min(max(result.residual_lag1_autocorrelation, 0.0), 0.95)
    inflation = np.sqrt((1.0 + rho) / (1.0 - rho))
    sd = {key: inflation * np.log(result.ci95[name][1] / result.ci95[name][0]) / (2.0 * t)
          for key, name in names.items()}
    # a factor the log did not narrow below its prior keeps its prior
    sd = {key: v for key, v in sd.items() if v < np.log1p(FACTOR_BY_KEY[key].width)}
    if not sd:
        return None
    keys = list(sd)
    correlation = np.eye(len(keys))
    if {"convection", "capacity"} <= set(keys) and result.correlation is not None:
        i, j = keys.index("convection"), keys.index("capacity")
        correlation[i, j] = correlation[j, i] = float(np.clip(result.correlation, -0.999, 0.999))
    return posterior_table(sd, correlation)


def with_fit_posterior(calibrated, result):
    """The calibrated scenario with the fit's posterior recorded in its [uncertainty] table."""
    table = posterior_from_fit(result)
    return calibrated if table is None else calibrated.changed(**{"uncertainty.posterior": table})
