"""Published population PK models, read from data, and their typical values.

Each model is one TOML file in ``tdmtui/core/library/models/``. Keys:

* ``id``, ``drug``, ``name``, ``citation`` (full), ``compartments`` (1 or 2),
  ``source`` (where our numbers were read).
* ``[preference]``: ``rank`` (1 first) and ``source``: which model the
  orchestrator shows first as ``bayesian`` when no model qualifies for ``auto``.
* ``[verification]``: ``status`` = ``"paper"`` (checked against the
  publication) or ``"secondary"`` (a secondary copy only);
  ``caution`` = text shown with every use of a secondary-only model.
* ``[covariates]``: the model's OWN covariate rules, applied instead of the
  local protocol's: ``crcl_formula`` (``"cockcroft-gault"``), ``crcl_weight``
  (``"tbw"``: which weight enters Cockcroft-Gault), ``crcl_weight_note``,
  ``scr_floor_mg_dl`` or ``scr_floor_umol_l`` (0 = none) applied when the age
  is above ``scr_floor_min_age_yr`` (0 = every age), ``crcl_cap_ml_min``
  (0 = none), ``note``.
* ``[parameters.<p>]`` for ``cl``, ``v1`` (V of a one-compartment model) and,
  for two compartments, ``q`` and ``v2``::

      P = L x prod (x / ref)^exponent x prod base^x
      L = theta x (1 + sum slope (x - ref))    linear_mode = "relative" (default)
      L = theta + sum slope (x - ref)          linear_mode = "absolute"

  with ``linear = [{covariate, slope, ref}]``, ``power = [{covariate, ref,
  exponent}]``, ``factor = [{covariate, base}]``. Covariates: ``crcl_cg``
  (mL/min), ``crcl_cg_l_h`` (L/h), ``tbw`` (kg), ``height`` (cm), ``age`` (yr),
  ``dial`` (1 on intermittent haemodialysis, else 0).
* ``[iiv]``: log-normal random effects, P_i = P_typical x exp(eta).
  ``convention`` says how the paper's figures become variances: ``"log"``
  omega^2 = ln(1 + CV^2), ``"cv2"`` omega^2 = CV^2, ``"variance"`` given as
  omega^2 (pk-sources.md 2.7). ``<p> = value`` per parameter with IIV;
  ``correlations = [{a, b, r}]`` or ``[{a, b, covariance}]``.
* ``[residual]``: ``additive_sd`` (mg/L) or ``additive_variance``,
  ``proportional_sd`` (fraction) or ``proportional_variance``;
  Var = a^2 + (b x C_pred)^2.
* ``[population]``: ``description``, ``setting``, optional ranges
  ``age_yr``, ``weight_kg``, ``height_cm``, ``crcl_ml_min`` as ``{min, max}``
  (only what the sources report), ``renal_replacement`` (accepted values),
  ``required_conditions``, ``excluded_conditions``.

How ``auto`` treats them: every model that does not exclude the patient may
be used, whatever its verification status; a model verified only from a
secondary copy carries a caution worded for the clinician (the full technical
caution stays in the audit record). Measured on one-level cases, leaving a
drawn level unused did more harm than the copying uncertainty it guarded
against. :func:`auto_model` returns the first model by ``preference.rank`` that
is neither excluded nor out of population, else the first not excluded, else
``None`` and the reason. A drug without a model (amikacin here) has no Bayesian
estimate: another drug's model is never borrowed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

import numpy as np

from tdmtui.core.alerts import Alert
from tdmtui.core.errors import InputError, NoEstimateError
from tdmtui.core.models import PKParams
from tdmtui.core.input.units import UMOL_PER_MG_DL
from tdmtui.core.patient.renal import cockcroft_gault

PARAMS_1 = ("cl", "v1")
PARAMS_2 = ("cl", "v1", "q", "v2")
COVARIATES = ("crcl_cg", "crcl_cg_l_h", "tbw", "height", "age", "dial")


@dataclass(frozen=True)
class Covariates:
    """Patient covariates in canonical units.

    Attributes:
        age: years. sex: ``male`` or ``female``. weight: total body weight, kg.
        height: cm. scr: latest serum creatinine, mg/dL.
        renal_replacement: ``none``, ``ihd``, ``crrt`` or ``pd``.
        conditions: ids from the library's conditions list.
    """

    age: float
    sex: str
    weight: float
    height: float
    scr: float
    renal_replacement: str = "none"
    conditions: tuple[str, ...] = ()


@dataclass(frozen=True)
class Typical:
    """A model's typical (population) parameters for one patient.

    Attributes:
        params: typical PK parameters.
        covariates: the covariate values the model used (by its own rules).
        notes: plain-words record of each covariate rule applied.
    """

    params: PKParams
    covariates: dict[str, float]
    notes: tuple[str, ...]


@dataclass(frozen=True, eq=False)
class PopModel:
    """One published population model (see the module docstring for the file keys).

    Attributes:
        eta_names: parameters carrying a random effect, in ``omega`` order.
        omega: covariance of eta (log scale).
        additive_sd: residual additive SD, mg/L. proportional_sd: fraction.
    """

    id: str
    drug: str
    name: str
    citation: str
    compartments: int
    status: str
    caution: str
    eta_names: tuple[str, ...]
    omega: np.ndarray
    additive_sd: float
    proportional_sd: float
    data: dict[str, Any] = field(repr=False)

    @property
    def param_names(self) -> tuple[str, ...]:
        return PARAMS_2 if self.compartments == 2 else PARAMS_1

    def model_covariates(self, cov: Covariates) -> tuple[dict[str, float], list[str]]:
        """Covariate values computed by this model's own rules, with notes.

        Cockcroft-Gault (pk-sources.md 1.1): (140 - age) x weight / (72 x SCr), x 0.85 if female.
        """
        rules = self.data["covariates"]
        notes: list[str] = []
        floor = float(rules.get("scr_floor_mg_dl", 0.0)) or float(rules.get("scr_floor_umol_l", 0.0)) / UMOL_PER_MG_DL
        min_age = float(rules.get("scr_floor_min_age_yr", 0.0))
        scr = cov.scr
        if floor > 0 and scr < floor and (min_age <= 0 or cov.age > min_age):
            notes.append(f"SCr {cov.scr:.2f} mg/dL raised to {floor:.2f} mg/dL by the model's rule")
            scr = floor
        # crcl_weight is "tbw" for every model (checked on load)
        crcl = cockcroft_gault(cov.age, cov.sex, cov.weight, scr)
        cap = float(rules.get("crcl_cap_ml_min", 0.0))
        if cap > 0 and crcl > cap:
            notes.append(f"CrCl {crcl:.0f} mL/min capped at {cap:.0f} mL/min by the model's rule")
            crcl = cap
        notes.append(f"CrCl {crcl:.1f} mL/min by Cockcroft-Gault with total body weight and SCr {scr:.2f} mg/dL "
                     f"({rules.get('crcl_weight_note', '')})")
        values = {"crcl_cg": crcl, "crcl_cg_l_h": crcl * 0.06, "tbw": cov.weight, "height": cov.height,
                  "age": cov.age, "dial": 1.0 if cov.renal_replacement == "ihd" else 0.0}
        return values, notes

    def typical(self, cov: Covariates) -> Typical:
        """Typical parameters for a patient.

        Raises:
            NoEstimateError: when an equation gives a non-positive value (e.g. a
                linear CL equation at very low CrCl): outside the model's range.
        """
        x, notes = self.model_covariates(cov)
        vals = {p: _equation(self.data["parameters"][p], x) for p in self.param_names}
        for p, v in vals.items():
            if not (math.isfinite(v) and v > 0):
                raise NoEstimateError(
                    "bayesian", f"{self.name} gives a non-positive typical {p.upper()} ({v:.3g}) for this patient "
                    f"(CrCl {x['crcl_cg']:.0f} mL/min): the patient is outside the model's range")
        params = PKParams(vals["cl"], vals["v1"], vals.get("q", 0.0), vals.get("v2", 0.0))
        return Typical(params, x, tuple(notes))


def _equation(spec: dict[str, Any], x: dict[str, float]) -> float:
    """Evaluate one parameter equation (module docstring)."""
    theta = float(spec["theta"])
    lin = sum(float(t["slope"]) * (x[t["covariate"]] - float(t["ref"])) for t in spec.get("linear", []))
    value = theta * (1.0 + lin) if spec.get("linear_mode", "relative") == "relative" else theta + lin
    for t in spec.get("power", []):
        base = x[t["covariate"]] / float(t["ref"])
        value *= base ** float(t["exponent"]) if base > 0 else float("nan")
    for t in spec.get("factor", []):
        value *= float(t["base"]) ** x[t["covariate"]]
    return value


def _variance(value: float, convention: str) -> float:
    if convention == "log":
        return math.log1p(value * value)
    if convention == "cv2":
        return value * value
    if convention == "variance":
        return value
    raise ValueError(f"unknown IIV convention {convention!r}")


def _build(data: dict[str, Any]) -> PopModel:
    """Validate one parsed model file and build the model."""
    mid = data["id"]
    n_cpt = int(data["compartments"])
    names = PARAMS_2 if n_cpt == 2 else PARAMS_1
    if n_cpt not in (1, 2) or set(data["parameters"]) != set(names):
        raise ValueError(f"{mid}: parameters must be exactly {names}")
    for p, spec in data["parameters"].items():
        unknown = set(spec) - {"theta", "linear_mode", "linear", "power", "factor", "source"}
        used = {t["covariate"] for k in ("linear", "power", "factor") for t in spec.get(k, [])}
        mode = spec.get("linear_mode", "relative")
        if unknown or not used <= set(COVARIATES) or mode not in ("relative", "absolute"):
            raise ValueError(f"{mid}: bad parameters.{p}")
    rules = data["covariates"]
    if rules["crcl_formula"] != "cockcroft-gault" or rules["crcl_weight"] != "tbw":
        raise ValueError(f"{mid}: only Cockcroft-Gault with total body weight is implemented")
    status = data["verification"]["status"]
    if status not in ("paper", "secondary") or (status == "secondary" and not data["verification"].get("caution")):
        raise ValueError(f"{mid}: verification needs a status and, for secondary, a caution")
    iiv = data["iiv"]
    conv = iiv["convention"]
    etas = tuple(p for p in names if p in iiv)
    omega = np.diag([_variance(float(iiv[p]), conv) for p in etas])
    for c in iiv.get("correlations", []):
        i, j = etas.index(c["a"]), etas.index(c["b"])
        cov = float(c["covariance"]) if "covariance" in c else float(c["r"]) * math.sqrt(omega[i, i] * omega[j, j])
        omega[i, j] = omega[j, i] = cov
    if np.any(np.linalg.eigvalsh(omega) <= 0):
        raise ValueError(f"{mid}: omega is not positive definite")
    res = data["residual"]
    add = float(res["additive_sd"]) if "additive_sd" in res else math.sqrt(float(res.get("additive_variance", 0.0)))
    prop = (float(res["proportional_sd"]) if "proportional_sd" in res
            else math.sqrt(float(res.get("proportional_variance", 0.0))))
    if add <= 0 and prop <= 0:
        raise ValueError(f"{mid}: residual error missing")
    return PopModel(mid, data["drug"], data["name"], data["citation"], n_cpt, status,
                    str(data["verification"].get("caution", "")), etas, omega, add, prop, data)


@lru_cache(maxsize=None)
def _all_models() -> tuple[PopModel, ...]:
    from tdmtui.core.library import model_files

    return tuple(_build(d) for d in model_files())


@lru_cache(maxsize=None)
def _drug_models(drug: str) -> tuple[PopModel, ...]:
    """One drug's models, parsing only that drug's files."""
    from tdmtui.core.library import model_files

    return tuple(m for m in (_build(d) for d in model_files(drug)) if m.drug == drug)


def all_models() -> tuple[PopModel, ...]:
    """Every model in the library, in file-name order."""
    return _all_models()


def get_model(model_id: str) -> PopModel:
    """A model by id. Raises InputError naming ``model`` when unknown."""
    for m in _drug_models(model_id.split("-")[0]):
        if m.id == model_id:
            return m
    raise InputError("model", f"no population model {model_id!r} in the library "
                              f"({', '.join(m.id for m in _all_models())})")


def not_available_reason(drug: str) -> str:
    """Why Bayesian estimation is unavailable for a drug without a model."""
    return (f"not available for {drug}: the drug library holds no verified population model for {drug}, "
            "and another drug's model is never used in its place")


def models_for(drug: str) -> list[PopModel]:
    """The library's models for a drug.

    Raises:
        NoEstimateError: (method ``bayesian``) when the drug has none, e.g. amikacin.
    """
    found = list(_drug_models(drug))
    if not found:
        raise NoEstimateError("bayesian", not_available_reason(drug))
    return found


@dataclass(frozen=True)
class Offer:
    """A model offered for a patient, with its flags.

    Attributes:
        model: the model. typical: its typical values (None when they cannot be computed).
        alerts: secondary-source caution, out-of-population and exclusion flags.
    """

    model: PopModel
    typical: Typical | None
    alerts: tuple[Alert, ...]

    @property
    def excluded(self) -> bool:
        """True when a stop-severity flag stands (excluded population, invalid typical values)."""
        return any(a.severity == "stop" for a in self.alerts)

    @property
    def out_of_population(self) -> bool:
        return any(a.code == "model-out-of-population" for a in self.alerts)


_RANGES = (("age_yr", "age", "patient.age", "age", "yr"), ("weight_kg", "tbw", "patient.weight", "weight", "kg"),
           ("height_cm", "height", "patient.height", "height", "cm"),
           ("crcl_ml_min", "crcl_cg", "patient.scr", "CrCl", "mL/min"))


def population_alerts(model: PopModel, cov: Covariates, x: dict[str, float]) -> list[Alert]:
    """Flags from the model's own population description (``x``: its covariates)."""
    pop = model.data["population"]
    out: list[Alert] = []
    if model.status != "paper":
        out.append(Alert("model-secondary-only", "caution", "", secondary_caution(model)))
    for key, var, fld, label, unit in _RANGES:
        rng = pop.get(key)
        if rng is None:
            continue
        lo, hi = float(rng.get("min", -math.inf)), float(rng.get("max", math.inf))
        if not lo <= x[var] <= hi:
            out.append(Alert("model-out-of-population", "caution", fld,
                             f"{label} {x[var]:.0f} {unit} is outside the range {model.name} was built on "
                             f"({rng.get('min', '-')}-{rng.get('max', '-')} {unit})"))
    if cov.renal_replacement not in pop.get("renal_replacement", ["none"]):
        out.append(Alert("model-excluded", "stop", "patient.renal_replacement",
                         f"{model.name} was not built on patients on {cov.renal_replacement}"))
    for c in sorted(set(cov.conditions) & set(pop.get("excluded_conditions", []))):
        out.append(Alert("model-excluded", "stop", "patient.conditions",
                         f"{model.name} was not built on patients with {c.replace('-', ' ')}"))
    for c in pop.get("required_conditions", []):
        if c not in cov.conditions:
            out.append(Alert("model-out-of-population", "caution", "patient.conditions",
                             f"{model.name} was built on patients with {c.replace('-', ' ')}; "
                             "none is recorded for this patient"))
    return out


def offer(model: PopModel, cov: Covariates) -> Offer:
    """One model's typical values and flags for a patient."""
    x, _ = model.model_covariates(cov)
    alerts = population_alerts(model, cov, x)
    try:
        typ: Typical | None = model.typical(cov)
    except NoEstimateError as exc:
        typ = None
        alerts.append(Alert("model-typical-invalid", "stop", "patient.scr", exc.why))
    return Offer(model, typ, tuple(alerts))


def offered_models(drug: str, cov: Covariates) -> list[Offer]:
    """Every model for a drug with its out-of-population flags ([] when the drug has none)."""
    return [offer(m, cov) for m in _drug_models(drug)]


def secondary_caution(model: PopModel) -> str:
    """The clinician's wording of a secondary-copy model's caution (details in the audit record)."""
    return (f"{model.name}: this model's numbers were checked against a secondary copy of the paper, not the "
            "paper itself; treat the Bayesian estimate as a guide, compare it with the other methods shown, "
            "and confirm with the next level")


def _rank(o: Offer) -> int:
    return int(o.model.data.get("preference", {}).get("rank", 99))


def auto_model(drug: str, cov: Covariates) -> tuple[PopModel | None, str]:
    """The model ``auto`` would use, and why; ``(None, reason)`` when none qualifies.

    Rule: by ``preference.rank``, the first model that is neither excluded nor
    out of population for this patient, else the first that is not excluded.
    Verification status does not bar a model (it adds a caution).
    """
    offers = sorted(offered_models(drug, cov), key=_rank)
    if not offers:
        return None, not_available_reason(drug)
    usable = [o for o in offers if not o.excluded]
    inside = [o for o in usable if not o.out_of_population]
    if inside:
        return inside[0].model, f"{inside[0].model.name}: built on patients like this one"
    if usable:
        return usable[0].model, f"{usable[0].model.name}: the patient is outside every model's population; nearest by rank"
    names = ", ".join(o.model.name for o in offers)
    return None, f"every {drug} model in the library excludes this patient ({names})"
