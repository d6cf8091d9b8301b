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
# - terms are plain variables, powers I(x^k), products a:b, log/log1p/sqrt/exp of a variable,
#   factors with treatment contrasts (R's default), whose first level is the reference, and
#   poly(x, k) / poly(x, y, degree = k) (converted exactly to powers), splines::ns(x, ...) and
#   splines::bs(x, ...) of a plain variable, alone or in products;
# - factor levels map to the integer codes of the categorical raster via `categorical`
#   (default: 1, 2, ... in the order of the factor's levels);
# - no offset(), no weights-dependent features beyond what glm() stores, no aliased (NA)
#   coefficients.

export_habcast_model <- function(fit, model_file, training_data, standardisation = list(),
                                 categorical = list(), rasters = list(), samples_file = NULL,
                                 name = NULL, units = list()) {
  stopifnot(inherits(fit, "glm"))
  if (any(is.na(coef(fit)))) {
    stop("coefficients ", paste(names(coef(fit))[is.na(coef(fit))], collapse = ", "),
         " are aliased (NA); refit without them")
  }
  if (!is.null(fit$offset) && any(fit$offset != 0)) {
    stop("the model has an offset; habcast's offset is a term or a constant - write it into ",
         "[coefficients] offset by hand")
  }
  family <- fit$family$family
  link <- fit$family$link
  if (!family %in% c("binomial", "poisson", "gaussian")) stop("family ", family, " is not supported")
  tt <- terms(fit)
  vars <- all.vars(delete.response(tt))
  xlev <- fit$xlevels
  for (v in names(xlev)) {
    ctr <- fit$contrasts[[v]]
    if (!is.null(ctr) && !identical(ctr, "contr.treatment")) {
      stop("factor ", v, " uses contrasts ", ctr, "; refit with treatment contrasts (R's default)")
    }
  }
  missing_cols <- setdiff(vars, names(training_data))
  if (length(missing_cols)) stop("training_data lacks column(s) ", paste(missing_cols, collapse = ", "))

  codes_of <- function(v) {
    lev <- xlev[[v]]
    codes <- categorical[[v]]
    if (is.null(codes)) codes <- setNames(seq_along(lev), lev)
    if (!all(lev %in% names(codes))) stop("categorical$", v, " lacks level(s) ", paste(setdiff(lev, names(codes)), collapse = ", "))
    codes[lev]
  }

  # R coefficient name -> habcast term label.
  term_label <- function(coef_name) {
    if (coef_name == "(Intercept)") return("(Intercept)")
    parts <- strsplit(coef_name, ":", fixed = TRUE)[[1]]
    out <- vapply(parts, function(p) {
      for (v in names(xlev)) {
        for (l in xlev[[v]]) if (p == paste0(v, l)) return(paste0(v, "[", l, "]"))
      }
      m <- regmatches(p, regexec("^I\\(([A-Za-z][A-Za-z0-9_]*) *\\^ *([0-9])\\)$", p))[[1]]
      if (length(m) == 3) return(paste0(m[2], "^", m[3]))
      if (grepl("^([A-Za-z][A-Za-z0-9_]*|(log|log1p|sqrt|exp)\\([A-Za-z][A-Za-z0-9_]*\\))$", p)) return(p)
      stop("term part \"", p, "\" of coefficient \"", coef_name, "\" has no habcast equivalent; ",
           "use x, I(x^k), a:b, log(x), log1p(x), sqrt(x), exp(x) or treatment-coded factors")
    }, character(1))
    paste(out, collapse = ":")
  }

  fmt17 <- function(x) {
    s <- sprintf("%.17g", x)
    ifelse(grepl("[.eEn]", s), s, paste0(s, ".0"))
  }
  q <- function(x) paste0("\"", gsub("\"", "\\\\\"", gsub("\\\\", "\\\\\\\\", x)), "\"")
  arr <- function(x) paste0("[ ", paste(x, collapse = ", "), " ]")

  if (is.null(samples_file)) {
    samples_file <- file.path(dirname(model_file),
                              paste0(sub("\\.[^.]*$", "", basename(model_file)), "-training.csv"))
  }
  est <- coef(fit)
  vc <- vcov(fit)
  # poly() columns become powers, ns()/bs() columns spline terms (functions at the end of this file).
  bases <- habcast_basis_terms(fit)
  centring <- habcast_poly_centring(bases, names(est), standardisation)
  M <- habcast_expand_coefficients(names(est), bases, centring, function(p) term_label(p))
  labels <- colnames(M)
  est <- setNames(drop(crossprod(M, est)), labels)
  vc <- crossprod(M, vc %*% M)
  vc <- (vc + t(vc)) / 2

  lines <- c(paste0("# Written by scripts/export_habcast_model.R from an R glm() fit (", R.version.string, ")."),
             "", "habcast_model = 1", "", "[model]")
  if (!is.null(name)) lines <- c(lines, paste0("name = ", q(name)))
  lines <- c(lines,
             paste0("response = ", q(all.vars(tt)[attr(tt, "response")])),
             paste0("family = ", q(family)), paste0("link = ", q(link)),
             paste0("description = ", q(paste("glm():", paste(deparse(formula(fit)), collapse = " ")))),
             paste0("deviance = ", fmt17(fit$deviance)), paste0("null_deviance = ", fmt17(fit$null.deviance)),
             paste0("aic = ", fmt17(fit$aic)), paste0("n = ", sum(fit$prior.weights > 0)),
             "", "[training]", paste0("samples = ", q(basename(samples_file))))
  for (v in vars) {
    lines <- c(lines, "", paste0("[covariates.", v, "]"))
    if (v %in% names(xlev)) {
      codes <- codes_of(v)
      lv <- paste0("{ code = ", as.integer(codes), ", name = ", q(names(codes)), " }")
      lines <- c(lines, "type = \"categorical\"", paste0("levels = ", arr(lv)),
                 paste0("reference = ", q(xlev[[v]][1])))
    } else {
      st <- standardisation[[v]]
      if (is.null(st)) st <- centring[[v]]
      lines <- c(lines, "type = \"continuous\"",
                 paste0("center = ", fmt17(if (is.null(st)) 0 else st[["center"]])),
                 paste0("scale = ", fmt17(if (is.null(st)) 1 else st[["scale"]])),
                 habcast_spline_lines(bases, v, fmt17, arr))
    }
    if (!is.null(units[[v]])) lines <- c(lines, paste0("units = ", q(units[[v]])))
    if (!is.null(rasters[[v]])) lines <- c(lines, paste0("raster = ", q(rasters[[v]])))
  }
  cov_rows <- apply(vc, 1, function(r) paste0("  ", arr(fmt17(r)), ","))
  lines <- c(lines, "", "[coefficients]", paste0("terms = ", arr(q(unname(labels)))),
             paste0("estimates = ", arr(fmt17(unname(est)))), "covariance = [", cov_rows, "]")
  writeLines(lines, model_file)

  # Training samples: raw covariate values, factor levels as their codes.
  samples <- training_data[, vars, drop = FALSE]
  for (v in intersect(vars, names(xlev))) {
    codes <- codes_of(v)
    samples[[v]] <- unname(codes[as.character(samples[[v]])])
  }
  con <- file(samples_file, "w")
  writeLines("# Written by scripts/export_habcast_model.R: raw covariate values at the fitting sites.", con)
  write.csv(format(samples, digits = 17), con, row.names = FALSE, quote = FALSE)
  close(con)
  invisible(list(model_file = model_file, samples_file = samples_file, terms = unname(labels)))
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
habcast_expand_part <- function(part, bases, centring, plain_label) {
  for (b in bases) {
    if (!startsWith(part, b$name)) next
    column <- substring(part, nchar(b$name) + 1)
    if (!column %in% b$columns) next
    if (b$kind %in% c("ns", "bs")) {
      return(list(list(coef = 1, powers = integer(0), other = paste0(b$kind, "(", b$vars, ")[", column, "]"))))
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
    return(monomials)
  }
  list(list(coef = 1, powers = integer(0), other = plain_label(part)))
}

habcast_monomial_label <- function(m) {
  pw <- m$powers[m$powers > 0]
  parts <- c(if (length(pw)) ifelse(pw == 1, names(pw), paste0(names(pw), "^", pw)), m$other)
  if (!length(parts)) return("(Intercept)")
  paste(sort(parts), collapse = ":")
}

# The map M (old coefficients x habcast terms) with eta = sum_L (M' b)_L m_L.
habcast_expand_coefficients <- function(coef_names, bases, centring, plain_label) {
  rows <- list()
  labels <- character(0)
  for (i in seq_along(coef_names)) {
    if (coef_names[i] == "(Intercept)") {
      monomials <- list(list(coef = 1, powers = integer(0), other = character(0)))
    } else {
      monomials <- list(list(coef = 1, powers = integer(0), other = character(0)))
      for (part in strsplit(coef_names[i], ":", fixed = TRUE)[[1]]) {
        expanded <- habcast_expand_part(part, bases, centring, plain_label)
        combined <- list()
        for (m in monomials) for (e in expanded) {
          pw <- m$powers
          for (v in names(e$powers)) pw[v] <- (if (is.na(pw[v])) 0L else pw[v]) + e$powers[[v]]
          combined[[length(combined) + 1]] <- list(coef = m$coef * e$coef, powers = pw, other = c(m$other, e$other))
        }
        monomials <- combined
      }
    }
    row <- numeric(0)
    for (m in monomials) {
      if (m$coef == 0) next
      l <- habcast_monomial_label(m)
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
