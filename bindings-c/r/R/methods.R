# S3 methods for the binding's classes: "ellipsa_model", "summary.ellipsa_model"
# and "ellipsa_scores". Presentation only.

print.ellipsa_model <- function(x, ...) {
  d <- ellipsa_describe(x)
  cat(sprintf("ellipsa model: %s (%s), %d variables, %d component%s\n", d$method, d$kind,
              d$dimension, d$components, if (d$components == 1) "" else "s"))
  cat(sprintf("rows used %.0f, dropped for missing values %.0f\n", d$rows_used, d$rows_dropped))
  if (d$kind == "gaussian") {
    cat("location:\n")
    print(ellipsa_location(x), ...)
  }
  invisible(x)
}

summary.ellipsa_model <- function(object, ...) {
  d <- ellipsa_describe(object)
  components <- lapply(seq_len(d$components), function(k) .ellipsa_component(object, k))
  structure(list(description = d, components = components, diagnostics = ellipsa_diagnostics(object)),
            class = "summary.ellipsa_model")
}

print.summary.ellipsa_model <- function(x, digits = max(3L, getOption("digits") - 3L), ...) {
  d <- x$description
  cat(sprintf("ellipsa model: %s (%s)\n", d$method, d$kind))
  cat(sprintf("variables: %s\n", paste(d$column_names, collapse = ", ")))
  cat(sprintf("rows used %.0f, dropped for missing values %.0f\n", d$rows_used, d$rows_dropped))
  for (k in seq_along(x$components)) {
    est <- x$components[[k]]
    if (length(x$components) > 1) cat(sprintf("\ncomponent %d (weight %.4g)\n", k, est$weight))
    cat("location:\n")
    print(signif(est$location, digits))
    cat("scatter:\n")
    print(signif(est$scatter, digits))
  }
  if (length(x$diagnostics) > 0) {
    cat("diagnostics:\n")
    print(signif(x$diagnostics, digits))
  }
  invisible(x)
}

# The per-row results as a data frame (matrices left out).
as.data.frame.ellipsa_scores <- function(x, row.names = NULL, optional = FALSE, ...) {
  data.frame(squared_distance = x$squared_distance, p_value = x$p_value, flag = x$flag,
             observed = x$observed, component = x$component, log_density = x$log_density,
             low_density = x$low_density, row.names = if (is.null(row.names)) x$row_names else row.names)
}

print.ellipsa_scores <- function(x, ...) {
  n <- length(x$squared_distance)
  cat(sprintf("ellipsa scores: %d rows, %d flagged at level %g, %d not scorable\n", n,
              sum(x$flag, na.rm = TRUE), x$level, sum(is.na(x$flag))))
  cat("(a flag is statistical evidence that a row is unusual, not a verdict)\n")
  print(utils::head(as.data.frame(x), 10), ...)
  if (n > 10) cat(sprintf("... %d more rows\n", n - 10))
  invisible(x)
}
