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
#   factors with treatment contrasts (R's default), whose first level is the reference;
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
  labels <- vapply(names(est), term_label, character(1))

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
      lines <- c(lines, "type = \"continuous\"",
                 paste0("center = ", fmt17(if (is.null(st)) 0 else st[["center"]])),
                 paste0("scale = ", fmt17(if (is.null(st)) 1 else st[["scale"]])))
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
