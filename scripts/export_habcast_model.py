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
  log/sqrt/exp of a variable, and treatment-coded factors C(x) (or string columns), whose first
  level is the reference, and patsy's B-splines bs(x, ...) of a plain variable (patsy's bs
  follows R's splines::bs), written as habcast spline terms with their knots on the covariate;
- factor levels map to the raster's integer codes via `categorical`. Default: when every level
  name is an integer ("0", "1", "12"), the code IS the name, so a raster of class codes means what
  the factor meant; otherwise 1, 2, ... in the order of the levels, and the mapping is printed: the
  raster must use those codes. A name that is another level's code would make terms and table cells
  ambiguous, so it raises, naming both readings (docs/model-format.md, "Naming a level");
- a covariate entering only as log(x), log1p(x) or sqrt(x) (np. or not) is written with
  transform = "log" (...) and the plain term x; one entering through patsy's center(x),
  standardize(x) or scale(x) (also inside I(... ** k)) gets the center and scale patsy memorised;
- an offset or exposure (GLM(..., offset=..., exposure=...)) is written to [coefficients] offset:
  give it as a habcast expression (offset="log(effort)"), or let the exporter find the column of
  `training_data` whose x, log(x) (or, for exposure, x) reproduces it; either way it is checked
  against the model's own offset values;
- a column patsy has to quote (Q("Solar.R")) is renamed to a valid habcast name (Solar_R): the
  mapping is printed and recorded in the model's description, and the training table, rasters and
  per-covariate options use the new name;
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
_STATEFUL = r"(center|standardize|scale)\((%s)(?:, *[^()]*)?\)" % _NAME


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
    # patsy's stateful centring: center(x), standardize(x), scale(x); their center and scale are
    # read from the design (_stateful_standardisation) and written to the covariate.
    m = re.fullmatch(r"(?:I\()?%s(?: *(?:\*\*|\^) *([0-9])\))?" % _STATEFUL, part)
    if m and (m.group(3) is None or part.startswith("I(")):
        return (m.group(2) + ("^" + m.group(3) if m.group(3) else "")), m.group(2)
    m = re.fullmatch(r"(?:np\.)?(log|log1p|sqrt|exp)\((%s)\)" % _NAME, part)
    if m:
        return "%s(%s)" % (m.group(1), m.group(2)), m.group(2)
    if re.fullmatch(_NAME, part):
        return part, part
    raise ValueError('term part "%s" has no habcast equivalent; use x, I(x ** k), a:b, log(x), '
                     "sqrt(x), exp(x) or C(x)" % part)


def _stateful_standardisation(model, exog_names):
    """{covariate: (center, scale)} for covariates that enter through patsy's center(),
    standardize() or scale(), from the fitted design's memorised state (the training mean, and
    sqrt(M2 / (n - ddof)) with patsy's default ddof = 0)."""
    found = {}
    design_info = getattr(getattr(model, "data", None), "design_info", None)
    for name in exog_names:
        for part in name.split(":"):
            m = re.search(_STATEFUL, part)
            if not m:
                continue
            kind, var = m.group(1), m.group(2)
            if design_info is None:
                raise ValueError("%s(%s) needs the model's patsy design to read its center and scale" % (kind, var))
            for factor, info in design_info.factor_infos.items():
                if not re.search(r"\b%s\(%s\b" % (kind, re.escape(var)), factor.name()):
                    continue
                for obj in info.state.get("transforms", {}).values():
                    if kind == "center" and hasattr(obj, "_sum"):
                        value = (float(obj._sum[0] / obj._count), 1.0)
                    elif kind != "center" and hasattr(obj, "current_M2"):
                        ddof = re.search(r"ddof *= *([0-9]+)", factor.name())
                        ddof = int(ddof.group(1)) if ddof else 0
                        if re.search(r"(center|rescale) *= *False", factor.name()):
                            raise ValueError("%s with center/rescale=False has no habcast equivalent" % factor.name())
                        value = (float(obj.current_mean[0]), float(np.sqrt(obj.current_M2[0] / (obj.current_n - ddof))))
                    else:
                        continue
                    if var in found and found[var] != value:
                        raise ValueError("%s is standardised two different ways in the formula" % var)
                    found[var] = value
            if var not in found:
                raise ValueError("could not read the center and scale of %s(%s) from the design" % (kind, var))
    return found


def _transforms(labels, covariates, standardisation, offset_var):
    """Covariates that enter only as log(x), log1p(x) or sqrt(x) become transform = ...; their
    term parts become plain x. Returns (labels, {covariate: transform})."""
    transforms = {}
    parts = [p for t in labels for p in t.split(":")]
    for var in covariates:
        uses = [re.fullmatch(r"(log|log1p|sqrt|exp)?\(?%s\)?(\^[0-9])?" % re.escape(var), p) for p in parts]
        uses = [m for m, p in zip(uses, parts) if m and re.search(r"\b%s\b" % re.escape(var), p)]
        fns = {m.group(1) for m in uses}
        if any(p.startswith("bs(%s)[" % var) for p in parts):
            continue  # the spline's knots are in the variable's own units: no transform under it
        if len(fns) == 1 and next(iter(fns)) in ("log", "log1p", "sqrt") and var not in standardisation \
                and var != offset_var:
            transforms[var] = next(iter(fns))
    if transforms:
        def plain(part):
            for var, fn in transforms.items():
                part = re.sub(r"^%s\(%s\)" % (fn, re.escape(var)), var, part)
            return part
        labels = [":".join(plain(p) for p in t.split(":")) for t in labels]
    return labels, transforms


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


_QUOTED = re.compile(r"""Q\((["'])(.+?)\1\)""")


def _valid_names(exog_names, columns):
    """patsy's Q("Solar.R") quotes a column whose name is not a Python name; habcast names are
    letters, digits and '_' starting with a letter. Returns the exog names with every quoted name
    replaced by a valid one (Solar.R -> Solar_R) and the mapping {original: new}."""
    renames = {}
    for name in exog_names:
        for _, original in _QUOTED.findall(name):
            new = re.sub(r"[^A-Za-z0-9_]", "_", original)
            if not re.match(r"[A-Za-z]", new):
                new = "x" + new
            if original in renames:
                continue
            renames[original] = new
            clash = [c for c in columns if c == new and c != original] + \
                [o for o, n in renames.items() if n == new and o != original]
            if clash:
                raise ValueError('column "%s" would become the habcast name "%s", which "%s" already has; rename one '
                                 "of them in the data" % (original, new, clash[0]))
    renamed = [_QUOTED.sub(lambda m: renames[m.group(2)], n) for n in exog_names]
    return renamed, renames


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


_FUNCTIONS = {"": lambda x: x, "log": np.log, "log1p": np.log1p, "sqrt": np.sqrt, "exp": np.exp}


def _model_offset(model):
    """The model's total offset on the link scale (offset + log(exposure)), or None."""
    total = None
    for attr in ("offset", "exposure"):  # statsmodels stores exposure already logged
        v = getattr(model, attr, None)
        if v is not None and np.any(np.asarray(v, dtype=float) != 0):
            total = np.asarray(v, dtype=float) + (0 if total is None else total)
    return total


def _offset_expression(model, training_data, given):
    """habcast's offset text for the model's offset, checked against its values."""
    total = _model_offset(model)
    if total is None:
        if given is not None:
            raise ValueError("offset=%r was given but the model has no offset or exposure" % (given,))
        return None, None
    n = len(training_data)
    if len(total) != n:
        raise ValueError("the model's offset has %d values but training_data %d rows; pass the raw table the model "
                         "was fitted on" % (len(total), n))
    candidates = []
    if given is not None:
        if isinstance(given, (int, float)):
            candidates = [(None, None, float(given))]
        else:
            m = re.fullmatch(r"(?:(log|log1p|sqrt|exp)\((%s)\)|(%s))" % (_NAME, _NAME), given.replace(" ", ""))
            if not m:
                raise ValueError("offset=%r: write x, log(x), log1p(x), sqrt(x), exp(x) or a number" % (given,))
            candidates = [(m.group(2) or m.group(3), m.group(1) or "", None)]
    else:
        for col in training_data.columns:
            if np.issubdtype(training_data[col].dtype, np.number):
                candidates += [(col, "log", None), (col, "", None)]
    for col, fn, constant in candidates:
        with np.errstate(all="ignore"):
            values = np.full(n, constant) if col is None else _FUNCTIONS[fn](np.asarray(training_data[col], dtype=float))
        if np.allclose(values, total, rtol=1e-10, atol=1e-12):
            if col is None:
                return _fmt17(constant), None
            return _q("%s(%s)" % (fn, col) if fn else col), col
    if given is not None:
        raise ValueError("offset=%r evaluated on training_data differs from the model's offset" % (given,))
    raise ValueError("the model has an offset or exposure, and no column of training_data reproduces it as x or "
                     "log(x); pass offset=\"log(effort)\" (a habcast expression) to name it")


def export_habcast_model(result, model_path, training_data, standardisation=None, categorical=None,
                         rasters=None, samples_path=None, name=None, units=None, term_names=None, offset=None):
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
    offset_text, offset_var = _offset_expression(model, training_data, offset)
    exog_names, renames = _valid_names(list(model.exog_names), list(training_data.columns))
    if renames:
        # The data and every per-covariate option now use the habcast names.
        training_data = training_data.rename(columns=renames)
        standardisation, categorical, rasters, units = (
            {renames.get(k, k): v for k, v in d.items()} for d in (standardisation, categorical, rasters, units))
        print("covariate names changed to valid habcast names: " +
              ", ".join("%s -> %s" % item for item in renames.items()), file=sys.stderr)
    if term_names is not None:
        if len(term_names) != len(exog_names):
            raise ValueError("term_names has %d labels for %d columns" % (len(term_names), len(exog_names)))
        labels = list(term_names)
        covariates = [c for c in training_data.columns if c in categorical or c in standardisation
                      or any(re.search(r"\b%s\b" % re.escape(c), t) for t in labels)]
        factors = set(categorical)
    else:
        labels, covariates, factors = habcast_terms(exog_names)
    stateful = _stateful_standardisation(model, exog_names)
    for var, value in stateful.items():
        if var in standardisation:
            raise ValueError("%s enters through center()/standardize() and is also in standardisation; give one" % var)
        plain = [n for n in exog_names for p in n.split(":") if re.fullmatch(r"(I\()?%s\b.*" % re.escape(var), p)]
        if plain:
            raise ValueError("%s enters both through center()/standardize() and as itself (%s); habcast standardises "
                             "a covariate one way" % (var, plain[0]))
    standardisation = dict(standardisation, **stateful)
    labels, transforms = _transforms(labels, covariates, standardisation, offset_var)
    if offset_var is not None and offset_var not in covariates:
        covariates.append(offset_var)
    missing = [c for c in covariates if c not in training_data.columns]
    if missing:
        raise ValueError("training_data lacks %s %s" % ("column" if len(missing) == 1 else "columns", ", ".join(missing)))

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

    level_codes = {}
    for var in sorted(factors):
        given = categorical.get(var)
        if given is None:
            if all(re.fullmatch(r"-?[0-9]{1,9}", l) for l in levels[var]):
                given = {l: int(l) for l in levels[var]}  # integer names: the code is the name
            else:
                given = {lvl: i + 1 for i, lvl in enumerate(levels[var])}
                print("factor %s: raster codes %s (the raster must hold these codes; pass categorical={%r: "
                      "{LEVEL: CODE, ...}} to choose others)"
                      % (var, ", ".join("%d = %s" % (c, l) for l, c in given.items()), var), file=sys.stderr)
        given = {str(k): int(v) for k, v in given.items()}
        lacking = [l for l in levels[var] if l not in given]
        if lacking:
            raise ValueError("categorical[%r] lacks %s %s" % (var, "level" if len(lacking) == 1 else "levels",
                                                               ", ".join(lacking)))
        mapping = {l: given[l] for l in levels[var]}
        if len(set(mapping.values())) != len(mapping):
            raise ValueError("categorical[%r] gives two levels the same code" % var)
        for l, code in mapping.items():
            if not re.fullmatch(r"-?[0-9]+", l):
                continue
            other = [o for o, c in mapping.items() if c == int(l) and o != l]
            if other:
                raise ValueError('factor %s: "%s" would mean two levels in the model file: the level named "%s" '
                                 '(code %d) and the level with code %s (named "%s"). Give integer-named levels '
                                 "their own number as code (the default), or rename the levels"
                                 % (var, l, l, code, l, other[0]))
        level_codes[var] = mapping

    def codes(var):
        return level_codes[var]

    if samples_path is None:
        stem = os.path.splitext(os.path.basename(model_path))[0]
        samples_path = os.path.join(os.path.dirname(model_path), stem + "-training.csv")

    endog = getattr(model, "endog_names", "response")
    lines = ["# Written by scripts/export_habcast_model.py from a statsmodels GLM (Python %s)." % sys.version.split()[0],
             "", "habcast_model = 1", "", "[model]"]
    if name:
        lines.append("name = " + _q(name))
    lines += ["response = " + _q(endog), "family = " + _q(family), "link = " + _q(link),
              "description = " + _q("statsmodels GLM: " + str(getattr(model, "formula", "") or ", ".join(exog_names)) +
                                    ("; covariates renamed: " + ", ".join("%s -> %s" % item for item in renames.items())
                                     if renames else "")),
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
            lines.append('type = "continuous"')
            if var in transforms:
                lines.append("transform = " + _q(transforms[var]))
            lines += ["center = " + _fmt17(center), "scale = " + _fmt17(scale)]
            lines += _spline_lines(model, var)
        if var in units:
            lines.append("units = " + _q(units[var]))
        if var in rasters:
            lines.append("raster = " + _q(rasters[var]))
    lines += ["", "[coefficients]", "terms = " + _arr(_q(t) for t in labels),
              "estimates = " + _arr(_fmt17(v) for v in params), "covariance = ["]
    lines += ["  " + _arr(_fmt17(v) for v in row) + "," for row in cov]
    lines.append("]")
    if offset_text is not None:
        lines.append("offset = " + offset_text)
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
