# The R functions of the ellipsa binding. They check and translate arguments,
# then call the glue; every estimate, distance and probability is computed by
# libellipsa through its C interface.
#
# Data: rows are observations, columns variables. A double matrix is read in
# place (no copy); integer or logical matrices and numeric data frames are
# converted to a double matrix first (a copy). NA and NaN both mean "missing".

.ellipsa_codes <- list(
  divisor = c("n" = 1L, "n-1" = 2L),
  rows = c(h_subset = 1L, outliers = 2L, dropped = 3L))

.ellipsa_code <- function(value, table_name) {
  if (is.null(value)) return(NULL)
  table <- .ellipsa_codes[[table_name]]
  if (!is.character(value) || length(value) != 1 || !(value %in% names(table)))
    .ellipsa_stop(sprintf("ELLIPSA_ERR_ARGUMENT: %s must be one of %s", table_name,
                          paste(sprintf("\"%s\"", names(table)), collapse = ", ")))
  table[[value]]
}

.ellipsa_whole <- function(value, what, lower = -Inf, upper = Inf) {
  if (is.null(value)) return(NULL)
  if (!is.numeric(value) || length(value) != 1 || is.na(value) || value != round(value) ||
      value < lower || value > upper)
    .ellipsa_stop(sprintf("ELLIPSA_ERR_ARGUMENT: %s must be a whole number in [%s, %s]",
                          what, format(lower), format(upper)))
  value
}

# A double matrix view of x for the glue: copies only when x is not already one.
.ellipsa_matrix <- function(x, one_row_vector = FALSE) {
  if (is.data.frame(x)) {
    numeric_columns <- vapply(x, function(col) is.numeric(col) || is.logical(col), logical(1))
    if (!all(numeric_columns))
      .ellipsa_stop(paste0("ELLIPSA_ERR_ARGUMENT: non-numeric columns: ",
                           paste(names(x)[!numeric_columns], collapse = ", ")))
    x <- as.matrix(x)
  }
  if (is.null(dim(x)) && one_row_vector && (is.numeric(x) || is.logical(x)))
    x <- matrix(x, nrow = 1, dimnames = list(NULL, names(x)))
  if (!is.matrix(x) || !(is.numeric(x) || is.logical(x)))
    .ellipsa_stop("ELLIPSA_ERR_ARGUMENT: x must be a numeric matrix or data frame")
  if (storage.mode(x) != "double") storage.mode(x) <- "double"
  x
}

.ellipsa_handle <- function(model) {
  if (!inherits(model, "ellipsa_model")) .ellipsa_stop("ELLIPSA_ERR_ARGUMENT: not an ellipsa_model")
  model$handle
}

.ellipsa_wrap <- function(handle) structure(list(handle = handle), class = "ellipsa_model")

# Fits a normal profile to the rows of x.
#   method:      "classical", "ledoit-wolf", "oas", "mcd", "detmcd", "mrcd", "mixture"
#   alpha:       MCD family, fraction in [0.5, 1] that sets h
#   seed:        whole number in [0, 2^53], or a decimal string up to 2^64-1
#   components:  mixtures, K or c(k_min, k_max)
#   structure:   mixtures, "full", "diagonal", "tied", "spherical" or "all"
#   restarts:    mixtures, EM runs from different starts
#   missing:     "drop" (default), "refuse", or "em" (mixtures)
#   divisor:     classical, "n-1" (default) or "n"
# Column names come from colnames(x) (the library names them x1, x2, ... otherwise).
ellipsa_fit <- function(x, method = "classical", alpha = NULL, seed = NULL, components = NULL,
                        structure = NULL, restarts = NULL, missing = NULL, divisor = NULL,
                        max_iterations = NULL, tolerance = 1e-6, regularisation = NULL) {
  x <- .ellipsa_matrix(x)
  if (!is.null(seed) && !is.character(seed))
    seed <- format(.ellipsa_whole(seed, "seed", 0, 2^53), scientific = FALSE)
  if (!is.null(components)) {
    if (!is.numeric(components) || !(length(components) %in% 1:2) || anyNA(components))
      .ellipsa_stop("ELLIPSA_ERR_ARGUMENT: components must be K or c(k_min, k_max)")
    components <- as.integer(rep_len(components, 2))
  }
  if (!is.null(alpha) && (!is.numeric(alpha) || length(alpha) != 1))
    .ellipsa_stop("ELLIPSA_ERR_ARGUMENT: alpha must be one number")
  settings <- list(
    divisor = .ellipsa_code(divisor, "divisor"),
    missing = .ellipsa_setting_code(missing, "missing"),
    structure = .ellipsa_setting_code(structure, "structure"),
    restarts = .ellipsa_whole(restarts, "restarts", -2^31 + 1, 2^31 - 1),
    components = components,
    alpha = alpha,
    seed = seed,
    max_iterations = .ellipsa_whole(max_iterations, "max_iterations", -2^31 + 1, 2^31 - 1),
    tolerance = as.numeric(tolerance),
    regularisation = regularisation)
  names <- colnames(x)
  if (!is.null(names)) names <- enc2utf8(as.character(names))
  handle <- .ellipsa_call("ellipsa_r_fit", x, as.character(method), settings, names)
  .ellipsa_wrap(handle)
}

# list(kind, method, dimension, components, rows_used, rows_dropped, column_names)
ellipsa_describe <- function(model) .ellipsa_call("ellipsa_r_describe", .ellipsa_handle(model))

ellipsa_columns <- function(model) ellipsa_describe(model)$column_names

.ellipsa_component <- function(model, component, raw = FALSE) {
  k <- .ellipsa_whole(component, "component", 1, .Machine$integer.max)
  est <- .ellipsa_call("ellipsa_r_component", .ellipsa_handle(model), as.integer(k - 1), raw)
  names <- ellipsa_columns(model)
  names(est$location) <- names
  dimnames(est$scatter) <- list(names, names)
  est
}

# Location of the model (of mixture component `component`, counted from 1).
ellipsa_location <- function(model, component = 1) .ellipsa_component(model, component)$location

# Scatter matrix with dimnames from the column names.
ellipsa_scatter <- function(model, component = 1) .ellipsa_component(model, component)$scatter

# Mixing weights of the components (1 for a single Gaussian).
ellipsa_weights <- function(model) {
  k <- ellipsa_describe(model)$components
  vapply(seq_len(k), function(j) .ellipsa_component(model, j)$weight, numeric(1))
}

# MCD family: the raw (unreweighted, consistency-corrected) location and scatter.
ellipsa_raw_estimate <- function(model) .ellipsa_component(model, 1, raw = TRUE)[c("location", "scatter")]

# One named number describing the fit, e.g. "log_det", "h", "bic" (see ellipsa.h).
ellipsa_diagnostic <- function(model, name) {
  if (!is.character(name) || length(name) != 1) .ellipsa_stop("ELLIPSA_ERR_ARGUMENT: name must be one string")
  .ellipsa_call("ellipsa_r_diagnostic", .ellipsa_handle(model), name, FALSE)
}

.ellipsa_diagnostic_names <- c(
  "log_det", "divisor", "shrinkage_intensity", "h", "consistency_factor", "reweight_factor",
  "raw_log_det", "log_likelihood", "bic", "icl", "iterations", "converged", "parameters",
  "log_density_cutoff")

# Every diagnostic that applies to this model, as a named numeric vector.
ellipsa_diagnostics <- function(model) {
  handle <- .ellipsa_handle(model)
  values <- vapply(.ellipsa_diagnostic_names, function(name)
    .ellipsa_call("ellipsa_r_diagnostic", handle, name, TRUE), numeric(1))
  values[!is.na(values)]
}

# Row numbers (1-based, rows of the fitting data) of a recorded set:
# "outliers" and "h_subset" (MCD family), "dropped" (rows with missing values).
ellipsa_rows <- function(model, which = c("outliers", "h_subset", "dropped")) {
  which <- match.arg(which)
  .ellipsa_call("ellipsa_r_row_set", .ellipsa_handle(model), .ellipsa_codes$rows[[which]])
}

# Mixtures: the model-choice table, one row per candidate tried.
ellipsa_selection <- function(model) {
  table <- as.data.frame(.ellipsa_call("ellipsa_r_selection", .ellipsa_handle(model)))
  table$structure <- ellipsa_structure_name(table$structure)
  table
}

# Scores the rows of x against the model. Columns are matched by name when x has
# column names (reordered if needed), by position otherwise; a plain vector is
# one row. Returns an "ellipsa_scores" list:
#   squared_distance, p_value (chi-square, `observed` degrees of freedom),
#   flag (TRUE/FALSE, NA when no coordinate is observed), observed, component
#   (from 1), log_density, low_density, contribution and conditional_drop
#   (n x p matrices), membership (n x K).
# A flag is statistical evidence that a row is unusual, not a verdict.
ellipsa_score <- function(model, x, level = 0.975) {
  handle <- .ellipsa_handle(model)
  x <- .ellipsa_matrix(x, one_row_vector = TRUE)
  names <- ellipsa_columns(model)
  if (!is.null(colnames(x)) && !identical(colnames(x), names)) {
    absent <- setdiff(names, colnames(x))
    if (length(absent) > 0)
      .ellipsa_stop(paste0("ELLIPSA_ERR_SHAPE: x lacks the model's columns: ", paste(absent, collapse = ", ")))
    x <- x[, names, drop = FALSE]
  }
  if (!is.numeric(level) || length(level) != 1) .ellipsa_stop("ELLIPSA_ERR_ARGUMENT: level must be one number")
  s <- .ellipsa_call("ellipsa_r_score", handle, x, as.numeric(level))
  rows <- rownames(x)
  dimnames(s$contribution) <- list(rows, names)
  dimnames(s$conditional_drop) <- list(rows, names)
  dimnames(s$membership) <- list(rows, NULL)
  s$row_names <- rows
  s$level <- level
  structure(s, class = "ellipsa_scores")
}

# The model as JSON text (UTF-8); also written to `file` when given (the text
# is then returned invisibly).
# save -> load -> save gives identical text.
ellipsa_save <- function(model, file = NULL) {
  text <- .ellipsa_call("ellipsa_r_save", .ellipsa_handle(model))
  if (!is.null(file)) {
    con <- file(file, open = "wb")
    on.exit(close(con))
    writeBin(charToRaw(text), con)
    return(invisible(text))
  }
  text
}

# A model from JSON text written by any ellipsa binding, or from `file`.
ellipsa_load <- function(text = NULL, file = NULL) {
  if (!is.null(file)) {
    size <- file.info(file)$size
    if (is.na(size)) .ellipsa_stop(paste0("ELLIPSA_ERR_ARGUMENT: cannot read ", file))
    text <- rawToChar(readBin(file, what = "raw", n = size))
    Encoding(text) <- "UTF-8"
  }
  if (!is.character(text) || length(text) != 1 || is.na(text))
    .ellipsa_stop("ELLIPSA_ERR_ARGUMENT: text must be one string")
  handle <- .ellipsa_call("ellipsa_r_load", text)
  .ellipsa_wrap(handle)
}

# Distribution functions behind every p-value and cutoff (vectorised over the
# first argument). Tails are upper-tail probabilities P(X > x).
.ellipsa_distribution <- function(which, x, a, b = 1) {
  .ellipsa_call("ellipsa_r_distribution", as.integer(which), as.numeric(x), as.numeric(a), as.numeric(b))
}
ellipsa_chi2_quantile <- function(probability, df) .ellipsa_distribution(1, probability, df)
ellipsa_chi2_tail <- function(x, df) .ellipsa_distribution(2, x, df)
ellipsa_f_quantile <- function(probability, df1, df2) .ellipsa_distribution(3, probability, df1, df2)
ellipsa_f_tail <- function(x, df1, df2) .ellipsa_distribution(4, x, df1, df2)
ellipsa_beta_quantile <- function(probability, a, b) .ellipsa_distribution(5, probability, a, b)
ellipsa_beta_tail <- function(x, a, b) .ellipsa_distribution(6, x, a, b)

# Upper control limit for Hotelling T^2 of individual rows, Tracy, Young &
# Mason (1992): phase 1 (rows used for the estimate) or 2 (new rows).
ellipsa_hotelling_limit <- function(m, p, alpha, phase = 1) {
  .ellipsa_call("ellipsa_r_hotelling_limit", as.integer(.ellipsa_whole(phase, "phase", 1, 2)),
                .ellipsa_whole(m, "m", 0, 2^53), .ellipsa_whole(p, "p", 0, 2^53), as.numeric(alpha))
}
