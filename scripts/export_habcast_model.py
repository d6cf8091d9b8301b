"""Write a GLM fitted with statsmodels as a habcast model file (docs/model-format.md) plus the
training samples table, so that `habcast predict` maps it over covariate rasters.

    import sys; sys.path.insert(0, "scripts")
    from export_habcast_model import export_habcast_model
    result = smf.glm("presence ~ tmin + I(tmin ** 2) + precip + tmin:precip + C(soil)",
                     data=standardised, family=sm.families.Binomial()).fit()
    export_habcast_model(result, "model.toml", training_data=raw,
                         standardisation={"tmin": (1.2, 0.9), "precip": (2086.0, 251.0)},
                         categorical={"soil": {"peat": 1, "loam": 2, "sand": 3}},
                         rasters={"tmin": "rasters/tmin.tif"})

Rules the model must follow (a ValueError says which one is broken):
- each covariate is a column of `training_data` holding RAW values, named as on predict's command
  line; if it was standardised before fitting, give (center, scale) in `standardisation`;
- terms are plain variables, powers I(x ** k) or I(x^k), products a:b, np.log/np.sqrt/np.exp or
  log/sqrt/exp of a variable, treatment-coded factors C(x) (or string columns), whose first
  level is the reference, and patsy's B-splines bs(x, ...) of a plain variable (patsy's bs
  follows R's splines::bs; patsy has no orthogonal poly() or ns() for numbers);
- factor levels map to the raster's integer codes via `categorical` (default: 1, 2, ... in the
  order of the levels);
- models without a formula need `term_names` (habcast labels, one per column of exog).
Uses only numpy and statsmodels (Debian: python3-numpy, python3-statsmodels).
"""

import os
import re
import sys

import numpy as np

_FAMILIES = {"Binomial": "binomial", "Poisson": "poisson", "Gaussian": "gaussian"}
_LINKS = {"logit": "logit", "probit": "probit", "cloglog": "cloglog", "log": "log", "identity": "identity"}
_NAME = r"[A-Za-z][A-Za-z0-9_]*"


def _fmt17(x):
    s = "%.17g" % float(x)
    return s if re.search(r"[.eEn]", s) else s + ".0"


def _q(text):
    return '"' + str(text).replace("\\", "\\\\").replace('"', '\\"') + '"'


def _arr(items):
    return "[ " + ", ".join(items) + " ]"


def _part_label(part, factors):
    m = re.fullmatch(r"bs\((%s)(?:,[^)]*)?\)\[([0-9]+)\]" % _NAME, part)
    if m:  # patsy's bs(): column k (0-based) -> habcast's bs(x)[k + 1]
        return "bs(%s)[%d]" % (m.group(1), int(m.group(2)) + 1), m.group(1)
    m = re.fullmatch(r"(?:C\((%s)(?:,[^)]*)?\)|(%s))\[T\.(.+)\]" % (_NAME, _NAME), part)
    if m:
        var = m.group(1) or m.group(2)
        factors.setdefault(var, None)
        return "%s[%s]" % (var, m.group(3)), var
    m = re.fullmatch(r"I\((%s) *(?:\*\*|\^) *([0-9])\)" % _NAME, part)
    if m:
        return "%s^%s" % (m.group(1), m.group(2)), m.group(1)
    m = re.fullmatch(r"(?:np\.)?(log|log1p|sqrt|exp)\((%s)\)" % _NAME, part)
    if m:
        return "%s(%s)" % (m.group(1), m.group(2)), m.group(2)
    if re.fullmatch(_NAME, part):
        return part, part
    raise ValueError('term part "%s" has no habcast equivalent; use x, I(x ** k), a:b, log(x), '
                     "sqrt(x), exp(x) or C(x)" % part)


def _spline_lines(model, var):
    """TOML line declaring the B-spline basis of `var` from patsy's stored bs() state (knots in the
    units the model saw), or [] when `var` has no bs() term."""
    design_info = getattr(getattr(model, "data", None), "design_info", None)
    if design_info is None:
        return []
    found = []
    for factor, info in design_info.factor_infos.items():
        code = factor.name()
        if not re.fullmatch(r"bs\(%s(?:,.*)?\)" % re.escape(var), code):
            continue
        for obj in (getattr(info, "state", None) or {}).get("transforms", {}).values():
            if type(obj).__name__ != "BS":
                continue
            degree = int(obj._degree)
            knots = np.sort(np.asarray(obj._all_knots, dtype=float))
            lower, upper = knots[0], knots[-1]
            inner = knots[degree + 1:len(knots) - degree - 1]
            columns = sum(1 for n in design_info.column_names if n.startswith(code + "["))
            intercept = columns == len(knots) - degree - 1
            found.append((tuple(inner), lower, upper, degree, intercept))
    if not found:
        return []
    if len(set(found)) > 1:
        raise ValueError("covariate %s enters through two different bs() bases; habcast holds one per covariate" % var)
    inner, lower, upper, degree, intercept = found[0]
    items = ["knots = " + _arr(_fmt17(k) for k in inner), "boundary = " + _arr([_fmt17(lower), _fmt17(upper)]),
             "degree = %d" % degree]
    if intercept:
        items.append("intercept = true")
    return ["bs = { " + ", ".join(items) + " }"]


def habcast_terms(exog_names):
    """statsmodels/patsy column names -> (habcast term labels, covariates in order, factor names)."""
    labels, covariates, factors = [], [], {}
    for name in exog_names:
        if name in ("Intercept", "const"):
            labels.append("(Intercept)")
            continue
        parts = [_part_label(p.strip(), factors) for p in name.split(":")]
        labels.append(":".join(p[0] for p in parts))
        for _, var in parts:
            if var not in covariates:
                covariates.append(var)
    return labels, covariates, set(factors)


def export_habcast_model(result, model_path, training_data, standardisation=None, categorical=None,
                         rasters=None, samples_path=None, name=None, units=None, term_names=None):
    standardisation = standardisation or {}
    categorical = categorical or {}
    rasters = rasters or {}
    units = units or {}
    model = result.model
    family = _FAMILIES.get(type(model.family).__name__)
    if family is None:
        raise ValueError("family %s is not supported" % type(model.family).__name__)
    link = _LINKS.get(type(model.family.link).__name__.lower())
    if link is None:
        raise ValueError("link %s is not supported" % type(model.family.link).__name__)
    if getattr(model, "offset", None) is not None and np.any(np.asarray(model.offset) != 0):
        raise ValueError("the model has an offset; write habcast's offset into [coefficients] by hand")
    exog_names = list(model.exog_names)
    if term_names is not None:
        if len(term_names) != len(exog_names):
            raise ValueError("term_names has %d labels for %d columns" % (len(term_names), len(exog_names)))
        labels = list(term_names)
        covariates = [c for c in training_data.columns if c in categorical or c in standardisation
                      or any(re.search(r"\b%s\b" % re.escape(c), t) for t in labels)]
        factors = set(categorical)
    else:
        labels, covariates, factors = habcast_terms(exog_names)
    missing = [c for c in covariates if c not in training_data.columns]
    if missing:
        raise ValueError("training_data lacks column(s) %s" % ", ".join(missing))

    params = np.asarray(result.params, dtype=float)
    cov = np.asarray(result.cov_params(), dtype=float)
    if not np.all(np.isfinite(params)) or not np.all(np.isfinite(cov)):
        raise ValueError("non-finite estimates or covariance (aliased terms?); refit without them")

    # Levels of each factor: the patsy design's order, which puts the reference first.
    levels = {}
    design_info = getattr(getattr(model, "data", None), "design_info", None)
    for var in factors:
        found = None
        if design_info is not None:
            for factor, info in design_info.factor_infos.items():
                if info.type == "categorical" and re.fullmatch(r"(?:C\()?%s(?:,[^)]*)?\)?" % re.escape(var), factor.name()):
                    found = [str(l) for l in info.categories]
        if found is None:
            found = sorted(str(v) for v in training_data[var].unique())
        levels[var] = found

    def codes(var):
        given = categorical.get(var)
        if given is None:
            return {lvl: i + 1 for i, lvl in enumerate(levels[var])}
        given = {str(k): int(v) for k, v in given.items()}
        lacking = [l for l in levels[var] if l not in given]
        if lacking:
            raise ValueError("categorical[%r] lacks level(s) %s" % (var, ", ".join(lacking)))
        return {l: given[l] for l in levels[var]}

    if samples_path is None:
        stem = os.path.splitext(os.path.basename(model_path))[0]
        samples_path = os.path.join(os.path.dirname(model_path), stem + "-training.csv")

    endog = getattr(model, "endog_names", "response")
    lines = ["# Written by scripts/export_habcast_model.py from a statsmodels GLM (Python %s)." % sys.version.split()[0],
             "", "habcast_model = 1", "", "[model]"]
    if name:
        lines.append("name = " + _q(name))
    lines += ["response = " + _q(endog), "family = " + _q(family), "link = " + _q(link),
              "description = " + _q("statsmodels GLM: " + str(getattr(model, "formula", "") or ", ".join(exog_names))),
              "deviance = " + _fmt17(result.deviance), "null_deviance = " + _fmt17(result.null_deviance),
              "aic = " + _fmt17(result.aic), "n = %d" % int(result.nobs),
              "", "[training]", "samples = " + _q(os.path.basename(samples_path))]
    for var in covariates:
        lines += ["", "[covariates.%s]" % var]
        if var in factors:
            c = codes(var)
            lv = ["{ code = %d, name = %s }" % (code, _q(lvl)) for lvl, code in c.items()]
            lines += ['type = "categorical"', "levels = " + _arr(lv), "reference = " + _q(levels[var][0])]
        else:
            center, scale = standardisation.get(var, (0.0, 1.0))
            lines += ['type = "continuous"', "center = " + _fmt17(center), "scale = " + _fmt17(scale)]
            lines += _spline_lines(model, var)
        if var in units:
            lines.append("units = " + _q(units[var]))
        if var in rasters:
            lines.append("raster = " + _q(rasters[var]))
    lines += ["", "[coefficients]", "terms = " + _arr(_q(t) for t in labels),
              "estimates = " + _arr(_fmt17(v) for v in params), "covariance = ["]
    lines += ["  " + _arr(_fmt17(v) for v in row) + "," for row in cov]
    lines.append("]")
    with open(model_path, "w", encoding="utf-8") as f:
        f.write("\n".join(lines) + "\n")

    with open(samples_path, "w", encoding="utf-8") as f:
        f.write("# Written by scripts/export_habcast_model.py: raw covariate values at the fitting sites.\n")
        f.write(",".join(covariates) + "\n")
        for _, row in training_data.iterrows():
            cells = []
            for var in covariates:
                v = row[var]
                cells.append(str(codes(var)[str(v)]) if var in factors else repr(float(v)))
            f.write(",".join(cells) + "\n")
    return {"model_path": model_path, "samples_path": samples_path, "terms": labels}
