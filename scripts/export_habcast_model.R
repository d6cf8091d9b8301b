# Write a GLM fitted with R's glm() as a habcast model file (docs/model-format.md) plus the training
# samples table, so that `habcast predict` maps it over covariate rasters.
#
#   source("scripts/export_habcast_model.R")
#   fit <- glm(presence ~ tmin + I(tmin^2) + precip + tmin:precip + soil, binomial, data = std)
#   export_habcast_model(fit, "model.toml", training_data = raw,
#                        standardisation = list(tmin = c(center = 1.2, scale = 0.9),
#                                               precip = c(center = 2086, scale = 251)),
#                        categorical = list(soil = c(peat = 1, loam = 2, sand = 3)),
#                        rasters = list(tmin = "rasters/tmin.tif", precip = "rasters/precip.tif",
#                                       soil = "rasters/soil.tif"))
#
# Rules the model must follow (the function stops with a message otherwise):
# - each variable in the formula is a covariate named as in `training_data` and on the command
#   line of predict; it may have been standardised before fitting: give its center and scale in
#   `standardisation` (the values (raw - center) / scale were used in glm()), and `training_data`
#   holds the RAW values;
# - terms are plain variables, powers I(x^k), products a:b, log/log1p/sqrt/exp of a variable, and
#   factors with treatment contrasts (R's default), whose first level is the reference,
#   poly(x, k) / poly(x, y, degree = k) (converted exactly to powers; a covariate used only there
#   is re-centred on the polynomial's own centre and spread), and splines::ns(x, ...) /
#   splines::bs(x, ...) of a plain variable (spline terms, knots declared on the covariate), alone
#   or in products. A variable
#   that enters only as log(x), log1p(x) or sqrt(x) (also inside I(...^k)) is written with
#   transform = "log" (...); one that enters only as scale(x) gets the center and scale R used
#   (from the model frame), one that enters only as I(x - c) gets center = c;
# - variable names that are not valid habcast names (Solar.R) are renamed (Solar_R); the mapping is
#   printed and recorded in the model's description, and the training table uses the new names;
# - an offset (offset(log(effort)) in the formula, or glm's offset = argument) of the form x,
#   log(x), log1p(x), sqrt(x), exp(x) or a number is written to [coefficients] offset, and checked
#   against the fit's own offset values;
# - factor levels map to the integer codes of the categorical raster via `categorical`. Default:
#   when every level name is an integer ("0", "1", "12"), the code IS the name, so a raster of
#   class codes means what the factor meant; otherwise codes 1, 2, ... in the order of the factor's
#   levels, and the mapping is printed: the raster must use those codes. A name that is another
#   level's code (name "1" for code 2 while code 1 is named "0") would make every term and table
#   cell ambiguous, so it stops with both readings named (docs/model-format.md, "Naming a level");
# - no weights-dependent features beyond what glm() stores, no aliased (NA) coefficients.

export_habcast_model <- function(fit, model_file, training_data, standardisation = list(),
                                 categorical = list(), rasters = list(), samples_file = NULL,
                                 name = NULL, units = list()) {
  stopifnot(inherits(fit, "glm"))
  fmt17 <- function(x) {
    s <- sprintf("%.17g", x)
    ifelse(grepl("[.eEn]", s), s, paste0(s, ".0"))
  }
  q <- function(x) paste0("\"", gsub("\"", "\\\\\"", gsub("\\\\", "\\\\\\\\", x)), "\"")
  arr <- function(x) paste0("[ ", paste(x, collapse = ", "), " ]")
  if (any(is.na(coef(fit)))) {
    stop("coefficients ", paste(names(coef(fit))[is.na(coef(fit))], collapse = ", "),
         " are aliased (NA); refit without them")
  }
  family <- fit$family$family
  link <- fit$family$link
  if (!family %in% c("binomial", "poisson", "gaussian")) stop("family ", family, " is not supported")
  tt <- terms(fit)
  xlev <- fit$xlevels
  for (v in names(xlev)) {
    ctr <- fit$contrasts[[v]]
    if (!is.null(ctr) && !identical(ctr, "contr.treatment")) {
      stop("factor ", v, " uses contrasts ", ctr, "; refit with treatment contrasts (R's default)")
    }
  }

  # Offsets: offset(...) terms of the formula and glm's offset = argument.
  offsets <- list()
  for (i in attr(tt, "offset")) offsets[[length(offsets) + 1]] <- attr(tt, "variables")[[i + 1]][[2]]
  if (!is.null(fit$call$offset)) offsets[[length(offsets) + 1]] <- fit$call$offset
  if (length(offsets) > 1) {
    stop("the model has ", length(offsets), " offsets (", paste(vapply(offsets, deparse1, ""), collapse = ", "),
         "); habcast's offset is one expression: combine them into one variable and refit")
  }
  offset_expr <- if (length(offsets)) offsets[[1]] else NULL
  offset_var <- NULL
  offset_fn <- NULL
  if (!is.null(offset_expr)) {
    if (is.numeric(offset_expr) && length(offset_expr) == 1) {
      offset_fn <- "constant"
    } else if (is.name(offset_expr)) {
      offset_var <- as.character(offset_expr); offset_fn <- ""
    } else if (is.call(offset_expr) && length(offset_expr) == 2 && is.name(offset_expr[[2]]) &&
               as.character(offset_expr[[1]]) %in% c("log", "log1p", "sqrt", "exp")) {
      offset_var <- as.character(offset_expr[[2]]); offset_fn <- as.character(offset_expr[[1]])
    } else {
      stop("offset ", deparse1(offset_expr), " has no habcast equivalent; use x, log(x), log1p(x), sqrt(x), exp(x) ",
           "or a number")
    }
  }

  vars <- unique(c(all.vars(delete.response(tt)), offset_var))
  missing_cols <- setdiff(vars, names(training_data))
  if (length(missing_cols)) {
    stop("training_data lacks ", ngettext(length(missing_cols), "column ", "columns "), paste(missing_cols, collapse = ", "))
  }

  # habcast names: letters, digits and _, starting with a letter (docs/model-format.md).
  hname <- setNames(character(0), character(0))
  for (v in vars) {
    n <- gsub("[^A-Za-z0-9_]", "_", v)
    if (!grepl("^[A-Za-z]", n)) n <- paste0("x_", n)
    while (n %in% hname) n <- paste0(n, "_")
    hname[[v]] <- n
  }
  renamed <- vars[hname[vars] != vars]
  rename_note <- if (length(renamed)) paste0(renamed, " -> ", hname[renamed], collapse = ", ") else ""
  if (length(renamed)) message("covariate names changed to valid habcast names: ", rename_note)
  # Per-variable options may be keyed by the R name or by the habcast name.
  opt <- function(lst, v) if (!is.null(lst[[v]])) lst[[v]] else lst[[hname[[v]]]]

  level_codes <- list()
  for (v in names(xlev)) {
    lev <- xlev[[v]]
    codes <- opt(categorical, v)
    if (is.null(codes)) {
      if (all(grepl("^-?[0-9]{1,9}$", lev))) {
        codes <- setNames(as.integer(lev), lev)  # integer names: the code is the name
      } else {
        codes <- setNames(seq_along(lev), lev)
        message("factor ", v, ": raster codes ", paste0(codes, " = ", lev, collapse = ", "),
                " (the raster must hold these codes; pass categorical = list(", v,
                " = c(LEVEL = CODE, ...)) to choose others)")
      }
    }
    lacking <- setdiff(lev, names(codes))
    if (length(lacking)) stop("categorical$", v, " lacks ", ngettext(length(lacking), "level ", "levels "), paste(lacking, collapse = ", "))
    codes <- codes[lev]
    if (anyDuplicated(codes)) stop("categorical$", v, " gives two levels the same code")
    for (l in lev) {
      other <- names(codes)[which(codes == suppressWarnings(as.numeric(l)) & names(codes) != l)]
      if (length(other)) {
        stop("factor ", v, ": \"", l, "\" would mean two levels in the model file: the level named \"", l,
             "\" (code ", codes[[l]], ") and the level with code ", l, " (named \"", other[1], "\"). ",
             "Give integer-named levels their own number as code (the default), or rename the levels")
      }
    }
    level_codes[[v]] <- codes
  }
  codes_of <- function(v) level_codes[[v]]

  # R coefficient name part -> list(var, kind, power, level, center): kind is "level", "plain",
  # "log", "log1p", "sqrt", "exp", "scale" or "centre".
  var_re <- "([A-Za-z.][A-Za-z0-9._]*)"
  parse_inner <- function(x) {
    x <- gsub("^\\((.*)\\)$", "\\1", trimws(x))
    if (x %in% vars) return(list(var = x, kind = "plain"))
    m <- regmatches(x, regexec(paste0("^(log|log1p|sqrt|exp|scale)\\(", var_re, "\\)$"), x))[[1]]
    if (length(m) == 3 && m[3] %in% vars) return(list(var = m[3], kind = m[2]))
    m <- regmatches(x, regexec(paste0("^", var_re, " *- *([-+0-9.eE]+)$"), x))[[1]]
    if (length(m) == 3 && m[2] %in% vars && !is.na(suppressWarnings(as.numeric(m[3])))) {
      return(list(var = m[2], kind = "centre", center = as.numeric(m[3])))
    }
    NULL
  }
  # poly(), ns() and bs() matrices of the model frame (functions at the end of this file).
  bases <- habcast_basis_terms(fit)
  parse_part <- function(p, coef_name) {
    for (b in bases) {
      if (startsWith(p, b$name) && substring(p, nchar(b$name) + 1) %in% b$columns) {
        return(list(var = b$vars, kind = "basis", power = 1))
      }
    }
    for (v in names(xlev)) {
      for (l in xlev[[v]]) if (p == paste0(v, l)) return(list(var = v, kind = "level", level = l, power = 1))
    }
    m <- regmatches(p, regexec("^I\\((.*[^ ]) *\\^ *([0-9])\\)$", p))[[1]]
    inner <- if (length(m) == 3) parse_inner(m[2]) else NULL
    if (!is.null(inner)) return(c(inner, power = as.integer(m[3])))
    m <- regmatches(p, regexec("^I\\((.*)\\)$", p))[[1]]
    inner <- if (length(m) == 2) parse_inner(m[2]) else parse_inner(p)
    if (!is.null(inner)) return(c(inner, power = 1))
    stop("term part \"", p, "\" of coefficient \"", coef_name, "\" has no habcast equivalent; ",
         "use x, I(x^k), a:b, log(x), log1p(x), sqrt(x), exp(x), scale(x), I(x - c) or treatment-coded factors")
  }
  est <- coef(fit)
  parsed <- lapply(names(est), function(n) {
    if (n == "(Intercept)") return(list())
    lapply(strsplit(n, ":", fixed = TRUE)[[1]], parse_part, coef_name = n)
  })

  # How each continuous variable enters: one transform, scale() or centring for all its parts
  # becomes the covariate's transform / center / scale; anything else stays a term function.
  mf <- model.frame(fit)
  # A covariate that enters only through orthogonal poly() is re-centred on the polynomial's own
  # centre and spread (NULL entries: keep its values).
  st_r <- Filter(Negate(is.null), lapply(setNames(vars, vars), function(v) opt(standardisation, v)))
  centring <- habcast_poly_centring(bases, names(est), st_r)
  if (!is.null(offset_var)) centring[[offset_var]] <- NULL
  entry <- list()
  for (v in setdiff(vars, names(xlev))) {
    parts <- Filter(function(p) v %in% p$var, unlist(parsed, recursive = FALSE))
    kinds <- unique(vapply(parts, function(p) p$kind, ""))
    st <- opt(standardisation, v)
    if (is.null(st)) st <- centring[[v]]
    e <- list(transform = "none", center = if (is.null(st)) 0 else st[["center"]],
              scale = if (is.null(st)) 1 else st[["scale"]], term_fn = TRUE)
    if (length(kinds) == 1 && kinds %in% c("log", "log1p", "sqrt") && is.null(st) && !identical(v, offset_var)) {
      e$transform <- kinds; e$term_fn <- FALSE
    } else if (length(kinds) == 1 && kinds == "scale") {
      col <- mf[[paste0("scale(", v, ")")]]
      if (is.null(attr(col, "scaled:center"))) {
        stop(v, " enters as scale(", v, ") only inside other expressions; add the plain term scale(", v,
             ") or standardise it before fitting and pass standardisation")
      }
      e$center <- attr(col, "scaled:center"); e$scale <- attr(col, "scaled:scale"); e$term_fn <- FALSE
    } else if (length(kinds) == 1 && kinds == "centre") {
      centres <- unique(vapply(parts, function(p) p$center, 0))
      if (length(centres) > 1) stop(v, " is centred at different values (", paste(centres, collapse = ", "), ")")
      e$center <- centres; e$scale <- 1; e$term_fn <- FALSE
    } else if (any(kinds %in% c("scale", "centre"))) {
      stop(v, " enters both as scale()/I(", v, " - c) and otherwise (", paste(kinds, collapse = ", "),
           "); habcast standardises a covariate one way: write all its terms the same way")
    }
    if (identical(v, offset_var) && (e$transform != "none" || e$center != 0 || e$scale != 1)) {
      stop(v, " is used by the offset and is transformed or standardised in the terms; habcast's offset acts on ",
           "the covariate's model value, so keep ", v, " raw (or give the offset its own variable)")
    }
    entry[[v]] <- e
  }

  part_label <- function(p) {
    h <- hname[[p$var]]
    if (p$kind == "level") return(paste0(h, "[", p$level, "]"))
    base <- if (p$kind %in% c("plain", "scale", "centre") || !entry[[p$var]]$term_fn) h else paste0(p$kind, "(", h, ")")
    if (p$power > 1) paste0(base, "^", p$power) else base
  }
  # poly() columns become powers, ns()/bs() columns spline terms: b' = M'b, V' = M'VM. M is the
  # identity (and the labels keep R's part order) when the model has no poly() term.
  M <- habcast_expand_coefficients(names(est), bases, centring,
                                   function(p) part_label(parse_part(p, p)), function(v) unname(hname[v]))
  labels <- colnames(M)

  offset_text <- NULL
  if (!is.null(offset_fn)) {
    if (offset_fn == "constant") {
      offset_text <- fmt17(as.numeric(offset_expr))
      ours <- rep(as.numeric(offset_expr), length(fit$offset))
    } else {
      h <- hname[[offset_var]]
      offset_text <- q(if (offset_fn == "") h else paste0(offset_fn, "(", h, ")"))
      x <- training_data[[offset_var]]
      ours <- if (offset_fn == "") x else get(offset_fn)(x)
    }
    if (length(ours) == length(fit$offset) && !isTRUE(all.equal(as.numeric(ours), as.numeric(fit$offset), tolerance = 1e-10))) {
      stop("the offset ", deparse1(offset_expr), " evaluated on training_data differs from the fit's offset; ",
           "pass the raw table the model was fitted on")
    }
  }

  if (is.null(samples_file)) {
    samples_file <- file.path(dirname(model_file),
                              paste0(sub("\\.[^.]*$", "", basename(model_file)), "-training.csv"))
  }
  est <- setNames(drop(crossprod(M, est)), labels)
  vc <- crossprod(M, vcov(fit) %*% M)
  vc <- (vc + t(vc)) / 2
  formula_text <- paste(trimws(deparse(formula(fit), width.cutoff = 500L)), collapse = " ")
  if (!is.null(fit$call$offset)) formula_text <- paste0(formula_text, ", offset = ", deparse1(fit$call$offset))
  description <- paste0("glm(): ", formula_text, if (nzchar(rename_note)) paste0("; covariates renamed: ", rename_note))

  lines <- c(paste0("# Written by scripts/export_habcast_model.R from an R glm() fit (", R.version.string, ")."),
             "", "habcast_model = 1", "", "[model]")
  if (!is.null(name)) lines <- c(lines, paste0("name = ", q(name)))
  lines <- c(lines,
             paste0("response = ", q(all.vars(tt)[attr(tt, "response")])),
             paste0("family = ", q(family)), paste0("link = ", q(link)),
             paste0("description = ", q(description)),
             paste0("deviance = ", fmt17(fit$deviance)), paste0("null_deviance = ", fmt17(fit$null.deviance)),
             paste0("aic = ", fmt17(fit$aic)), paste0("n = ", sum(fit$prior.weights > 0)),
             "", "[training]", paste0("samples = ", q(basename(samples_file))))
  for (v in vars) {
    lines <- c(lines, "", paste0("[covariates.", hname[[v]], "]"))
    if (v %in% names(xlev)) {
      codes <- codes_of(v)
      lv <- paste0("{ code = ", as.integer(codes), ", name = ", q(names(codes)), " }")
      lines <- c(lines, "type = \"categorical\"", paste0("levels = ", arr(lv)),
                 paste0("reference = ", q(xlev[[v]][1])))
    } else {
      e <- entry[[v]]
      lines <- c(lines, "type = \"continuous\"")
      if (e$transform != "none") lines <- c(lines, paste0("transform = ", q(e$transform)))
      lines <- c(lines, paste0("center = ", fmt17(e$center)), paste0("scale = ", fmt17(e$scale)),
                 habcast_spline_lines(bases, v, fmt17, arr))
    }
    if (!is.null(opt(units, v))) lines <- c(lines, paste0("units = ", q(opt(units, v))))
    if (!is.null(opt(rasters, v))) lines <- c(lines, paste0("raster = ", q(opt(rasters, v))))
  }
  cov_rows <- apply(vc, 1, function(r) paste0("  ", arr(fmt17(r)), ","))
  lines <- c(lines, "", "[coefficients]", paste0("terms = ", arr(q(unname(labels)))),
             paste0("estimates = ", arr(fmt17(unname(est)))), "covariance = [", cov_rows, "]")
  if (!is.null(offset_text)) lines <- c(lines, paste0("offset = ", offset_text))
  writeLines(lines, model_file)

  # Training samples: raw covariate values, factor levels as their codes, habcast names.
  samples <- training_data[, vars, drop = FALSE]
  for (v in intersect(vars, names(xlev))) {
    codes <- codes_of(v)
    samples[[v]] <- unname(codes[as.character(samples[[v]])])
  }
  names(samples) <- unname(hname[vars])
  con <- file(samples_file, "w")
  writeLines("# Written by scripts/export_habcast_model.R: raw covariate values at the fitting sites.", con)
  samples[] <- lapply(samples, function(x) format(x, digits = 17, trim = TRUE))  # exact, unpadded
  write.csv(samples, con, row.names = FALSE, quote = FALSE)
  close(con)
  invisible(list(model_file = model_file, samples_file = samples_file, terms = unname(labels),
                 names = hname))
}

# ---- Orthogonal polynomials and spline bases -------------------------------------------------
# poly(x, k), poly(x, y, degree = k) (orthogonal or raw = TRUE) are converted exactly to powers
# and products of the covariates: each basis column is a polynomial, so eta = sum_i b_i z_i(x) =
# sum_L (M' b)_L m_L(x) over the monomials m_L, and the file gets b' = M' b, V' = M' V M
# (docs/model-format.md says why habcast converts rather than storing the recurrence).
# splines::ns() and splines::bs() are written as habcast spline terms ns(x)[k], bs(x)[k] with their
# knots, boundary knots, degree and intercept on the covariate.

# Basis variables of the model frame: poly, ns and bs matrices and the covariates they act on.
habcast_basis_terms <- function(fit) {
  mf <- model.frame(fit)
  out <- list()
  for (nm in names(mf)) {
    obj <- mf[[nm]]
    kind <- if (inherits(obj, "poly")) "poly" else if (inherits(obj, "ns")) "ns" else if (inherits(obj, "bs")) "bs" else NULL
    if (is.null(kind)) next
    call <- str2lang(nm)
    args <- as.list(call)[-1]
    named <- if (is.null(names(args))) rep(FALSE, length(args)) else names(args) != ""
    data_args <- args[!named]
    if (kind != "poly") data_args <- data_args[1]
    if (kind == "poly" && length(data_args) > 1 && !is.name(data_args[[length(data_args)]]))
      data_args <- data_args[-length(data_args)]  # poly(x, 2): the unnamed degree
    if (!all(vapply(data_args, is.name, logical(1))))
      stop("\"", nm, "\" applies ", kind, "() to an expression; habcast needs a plain covariate there ",
           "(put a log or other transform on the covariate itself, see docs/model-format.md)")
    out[[nm]] <- list(name = nm, kind = kind, vars = unname(vapply(data_args, as.character, character(1))),
                      columns = colnames(obj), obj = obj)
  }
  out
}

# Coefficients of an orthogonal-polynomial basis as polynomials in w, where the covariate's value
# is center + scale * w: a (degree + 1) x degree matrix, column j = coefficients of w^0..w^degree.
habcast_poly_power_coefficients <- function(coefs, degree, center, scale) {
  alpha <- coefs$alpha
  norm2 <- coefs$norm2
  shift <- function(p, a) c(0, p * scale) + c(p * (center - a), 0)  # (x - a) * p(w)
  pad <- function(p) c(p, rep(0, degree + 1 - length(p)))
  Z <- vector("list", degree + 1)
  Z[[1]] <- pad(1)
  Z[[2]] <- pad(shift(1, alpha[1]))
  if (degree > 1) for (i in 2:degree) {
    Z[[i + 1]] <- pad(shift(Z[[i]][1:i], alpha[i])) - (norm2[i + 1] / norm2[i]) * Z[[i - 1]]
  }
  sapply(1:degree, function(j) Z[[j + 1]] / sqrt(norm2[j + 2]))
}

# How a poly() covariate that enters nowhere else is re-centred: on the polynomial's own centre
# and spread, so the powers written to the file stay well conditioned. NULL: keep its values.
habcast_poly_centring <- function(bases, coef_names, standardisation) {
  centring <- list()
  polys <- Filter(function(b) b$kind == "poly" && !is.null(attr(b$obj, "coefs")), bases)
  for (b in polys) {
    coefs <- attr(b$obj, "coefs")
    if (length(b$vars) == 1) coefs <- list(coefs)
    for (k in seq_along(b$vars)) {
      v <- b$vars[k]
      if (!is.null(standardisation[[v]]) || !is.null(centring[[v]])) next
      others <- unlist(strsplit(coef_names, ":", fixed = TRUE))
      outside_poly <- Filter(function(p) {
        !any(vapply(bases, function(bb) startsWith(p, bb$name), logical(1))) && grepl(paste0("\\b", v, "\\b"), p)
      }, others)
      if (length(outside_poly)) next
      n <- coefs[[k]]$norm2[2]  # norm2 = c(1, n, ...): the number of observations
      centring[[v]] <- c(center = coefs[[k]]$alpha[1], scale = sqrt(coefs[[k]]$norm2[3] / n))
    }
  }
  centring
}

# One coefficient-name part -> list of monomials (coef, powers = named integer, other = labels).
habcast_expand_part <- function(part, bases, centring, plain_label, name_of = identity) {
  for (b in bases) {
    if (!startsWith(part, b$name)) next
    column <- substring(part, nchar(b$name) + 1)
    if (!column %in% b$columns) next
    if (b$kind %in% c("ns", "bs")) {
      return(list(list(coef = 1, powers = integer(0), other = paste0(b$kind, "(", name_of(b$vars), ")[", column, "]"), basis = TRUE)))
    }
    degrees <- as.integer(strsplit(column, ".", fixed = TRUE)[[1]])
    coefs <- attr(b$obj, "coefs")
    if (length(b$vars) == 1 && !is.null(coefs)) coefs <- list(coefs)
    monomials <- list(list(coef = 1, powers = integer(0), other = character(0)))
    for (k in seq_along(b$vars)) {
      d <- degrees[k]
      if (d == 0) next
      v <- b$vars[k]
      if (is.null(coefs)) {  # raw = TRUE: the column is the power itself
        terms_k <- list(list(coef = 1, power = d))
      } else {
        cs <- if (is.null(centring[[v]])) c(center = 0, scale = 1) else centring[[v]]
        A <- habcast_poly_power_coefficients(coefs[[k]], max(attr(b$obj, "degree")), cs[["center"]], cs[["scale"]])
        terms_k <- lapply(0:d, function(q) list(coef = A[q + 1, d], power = q))
      }
      next_monomials <- list()
      for (m in monomials) for (tk in terms_k) {
        pw <- m$powers
        if (tk$power > 0) pw[v] <- tk$power
        next_monomials[[length(next_monomials) + 1]] <- list(coef = m$coef * tk$coef, powers = pw, other = m$other)
      }
      monomials <- next_monomials
    }
    return(lapply(monomials, function(m) c(m, basis = TRUE)))
  }
  list(list(coef = 1, powers = integer(0), other = plain_label(part), basis = FALSE))
}

# Parts of a term with a basis part are sorted (one label per monomial, whatever the order of
# the factors); a term without one keeps R's order.
habcast_monomial_label <- function(m, name_of = identity) {
  pw <- m$powers[m$powers > 0]
  parts <- c(if (length(pw)) ifelse(pw == 1, name_of(names(pw)), paste0(name_of(names(pw)), "^", pw)), m$other)
  if (!length(parts)) return("(Intercept)")
  paste(if (isTRUE(m$basis)) sort(parts) else parts, collapse = ":")
}

# The map M (old coefficients x habcast terms) with eta = sum_L (M' b)_L m_L.
habcast_expand_coefficients <- function(coef_names, bases, centring, plain_label, name_of = identity) {
  rows <- list()
  labels <- character(0)
  for (i in seq_along(coef_names)) {
    if (coef_names[i] == "(Intercept)") {
      monomials <- list(list(coef = 1, powers = integer(0), other = character(0)))
    } else {
      monomials <- list(list(coef = 1, powers = integer(0), other = character(0)))
      for (part in strsplit(coef_names[i], ":", fixed = TRUE)[[1]]) {
        expanded <- habcast_expand_part(part, bases, centring, plain_label, name_of)
        combined <- list()
        for (m in monomials) for (e in expanded) {
          pw <- m$powers
          for (v in names(e$powers)) pw[v] <- (if (is.na(pw[v])) 0L else pw[v]) + e$powers[[v]]
          combined[[length(combined) + 1]] <- list(coef = m$coef * e$coef, powers = pw, other = c(m$other, e$other),
                                                   basis = isTRUE(m$basis) || isTRUE(e$basis))
        }
        monomials <- combined
      }
    }
    row <- numeric(0)
    for (m in monomials) {
      if (m$coef == 0) next
      l <- habcast_monomial_label(m, name_of)
      if (!l %in% labels) labels <- c(labels, l)
      row[l] <- (if (is.na(row[l])) 0 else row[l]) + m$coef
    }
    rows[[i]] <- row
  }
  M <- matrix(0, length(coef_names), length(labels), dimnames = list(coef_names, labels))
  for (i in seq_along(rows)) M[i, names(rows[[i]])] <- rows[[i]]
  M
}

# TOML lines declaring the spline bases a covariate's terms use.
habcast_spline_lines <- function(bases, v, fmt17, arr) {
  lines <- character(0)
  for (kind in c("ns", "bs")) {
    found <- Filter(function(b) b$kind == kind && identical(b$vars, v), bases)
    if (!length(found)) next
    defs <- unique(lapply(found, function(b) attributes(b$obj)[c("knots", "Boundary.knots", "intercept", "degree")]))
    if (length(defs) > 1)
      stop("covariate ", v, " enters through two different ", kind, "() bases; habcast holds one ", kind,
           "() basis per covariate")
    d <- defs[[1]]
    items <- c(paste0("knots = ", arr(fmt17(unname(d$knots)))), paste0("boundary = ", arr(fmt17(unname(d$Boundary.knots)))))
    if (kind == "bs") items <- c(items, paste0("degree = ", as.integer(d$degree)))
    if (isTRUE(d$intercept)) items <- c(items, "intercept = true")
    lines <- c(lines, paste0(kind, " = { ", paste(items, collapse = ", "), " }"))
  }
  lines
}
