# Smoke test of the R binding (bindings-c/r): builds the glue with R CMD SHLIB,
# loads it, and checks the binding end to end against base R on invented data.
# Any failed check stops with a non-zero exit status.
#
# Environment (set by tests/bindings/r.cmake):
#   ELLIPSA_R_LIBRARY    when set: use the package installed in this R library
#                        instead (the four below are then not needed)
#   ELLIPSA_INCLUDE_DIR  folder of ellipsa.h
#   ELLIPSA_LIB_DIR      folder of libellipsa.so
#   ELLIPSA_R_DIR        bindings-c/r
#   ELLIPSA_R_SCRATCH    where the glue is compiled
#   ELLIPSA_CROSS_DIR    optional: r_model.json is written there

required <- function(name) {
  value <- Sys.getenv(name)
  if (!nzchar(value)) stop("environment variable ", name, " is not set")
  value
}
installed <- Sys.getenv("ELLIPSA_R_LIBRARY")
if (nzchar(installed)) {
  # The installed package (tests/install/test_r_package.py): nothing from the
  # source tree, the glue it compiled against the installed libellipsa.
  library(ellipsa, lib.loc = installed)
  where <- normalizePath(find.package("ellipsa"))
  if (!startsWith(where, normalizePath(installed)))
    stop("package ellipsa loaded from ", where, ", not from ", installed)
  versions <- ellipsa_version()
  cat("installed package", where, "\n")
} else {
  r_dir <- required("ELLIPSA_R_DIR")
  for (f in sort(list.files(file.path(r_dir, "R"), pattern = "\\.R$", full.names = TRUE))) source(f)
  glue <- ellipsa_build_glue(r_dir, required("ELLIPSA_INCLUDE_DIR"), required("ELLIPSA_LIB_DIR"),
                             required("ELLIPSA_R_SCRATCH"))
  versions <- ellipsa_load_library(glue)
}
cat("ellipsa library", versions[["library"]], "glue header", versions[["header"]], "\n")

# Largest absolute difference relative to the largest reference magnitude.
relative_error <- function(actual, expected) max(abs(actual - expected)) / max(abs(expected))
checks <- 0L
check <- function(ok, what) {
  if (!isTRUE(ok)) stop("check failed: ", what)
  checks <<- checks + 1L
}
# The ellipsa_error condition raised by expr (or a failed check if none is).
error_of <- function(expr) {
  tryCatch({ expr; NULL }, ellipsa_error = function(e) e)
}

# ---- invented correlated data (common practice, no published source)
set.seed(20240611)
n <- 250L
p <- 3L
mixing <- matrix(c(2.0, 0.0, 0.0,
                   0.8, 1.5, 0.0,
                   -0.5, 0.3, 0.7), p, p, byrow = TRUE)
x <- matrix(rnorm(n * p), n, p) %*% t(mixing)
x <- sweep(x, 2, c(10, -3, 250), "+")
colnames(x) <- c("temperature", "pressure", "flow")

# ---- classical fit against colMeans(), cov() and mahalanobis()
model <- ellipsa_fit(x, method = "classical")
check(inherits(model, "ellipsa_model"), "class of a fitted model")
location <- ellipsa_location(model)
scatter <- ellipsa_scatter(model)
err_location <- relative_error(location, colMeans(x))
err_scatter <- relative_error(scatter, cov(x))
cat(sprintf("classical: location rel. error %.2e, scatter rel. error %.2e\n", err_location, err_scatter))
check(err_location <= 1e-12, "location equals colMeans(x)")
check(err_scatter <= 1e-12, "scatter equals cov(x)")
check(identical(names(location), colnames(x)), "location is named by colnames(x)")
check(identical(dimnames(scatter), list(colnames(x), colnames(x))), "scatter dimnames")
check(identical(ellipsa_diagnostic(model, "divisor"), 2), "default divisor n-1")
d <- ellipsa_describe(model)
check(d$method == "classical" && d$kind == "gaussian" && d$dimension == p && d$rows_used == n,
      "describe")

scores <- ellipsa_score(model, x)
reference_d2 <- mahalanobis(x, colMeans(x), cov(x))
err_d2 <- max(abs(scores$squared_distance - reference_d2) / reference_d2)
cat(sprintf("classical: squared distance max rel. error vs mahalanobis() %.2e\n", err_d2))
check(err_d2 <= 1e-10, "squared distances equal mahalanobis()")
# A classical model scores against the new-rows reference of Tracy, Young &
# Mason (1992): m(m-p) T^2 / (p(m+1)(m-1)) ~ F(p, m-p), m = n rows (R's pf, qf).
f_stat <- reference_d2 * n * (n - p) / (p * (n + 1) * (n - 1))
check(relative_error(scores$p_value, pf(f_stat, p, n - p, lower.tail = FALSE)) <= 1e-10,
      "p-values equal the phase II pf() upper tail")
limit <- p * (n + 1) * (n - 1) / (n * (n - p)) * qf(0.975, p, n - p)
check(identical(scores$flag, scores$squared_distance > limit), "flags follow the phase II limit")
check(all(scores$observed == p), "all coordinates observed")
check(identical(dim(scores$contribution), c(n, p)) &&
        identical(colnames(scores$contribution), colnames(x)), "contribution matrix shape and names")
check(relative_error(rowSums(scores$contribution), scores$squared_distance) <= 1e-10,
      "contributions sum to the distance")
check(nrow(as.data.frame(scores)) == n, "as.data.frame of scores")

# ---- missing values: NA (and NaN) are missing, scored on the observed coordinates
with_na <- x[1:6, ]
with_na[2, 1] <- NA
with_na[3, 2] <- NaN
with_na[4, ] <- NA
partial <- ellipsa_score(model, with_na)
check(identical(partial$observed, c(3L, 2L, 2L, 0L, 3L, 3L)), "observed counts with NA / NaN")
check(is.na(partial$flag[4]) && is.nan(partial$squared_distance[4]), "an all-missing row is not scorable")
sub <- c(2, 3)
marginal <- mahalanobis(x[2, sub], colMeans(x)[sub], cov(x)[sub, sub])
check(abs(partial$squared_distance[2] - marginal) / marginal <= 1e-10, "NA row scored on its marginal")
x_missing <- x
x_missing[c(5, 17), 3] <- NA
model_missing <- ellipsa_fit(x_missing)
check(ellipsa_describe(model_missing)$rows_dropped == 2, "rows with NA are dropped and counted")
check(identical(ellipsa_rows(model_missing, "dropped"), c(5, 17)), "dropped row numbers are 1-based")
check(relative_error(ellipsa_location(model_missing), colMeans(x[-c(5, 17), ])) <= 1e-12,
      "location on the complete rows")

# ---- integer matrices and data frames are converted
xi <- matrix(as.integer(round(x * 10)), n, p, dimnames = dimnames(x))
check(relative_error(ellipsa_scatter(ellipsa_fit(xi)), cov(xi)) <= 1e-12, "integer matrix")
check(relative_error(ellipsa_location(ellipsa_fit(as.data.frame(x))), colMeans(x)) <= 1e-12,
      "data frame")

# ---- reordered columns give the correspondingly permuted estimates
order <- c(2, 1, 3)
permuted <- ellipsa_fit(x[, order])
check(relative_error(ellipsa_location(permuted), location[order]) <= 1e-12 &&
        identical(names(ellipsa_location(permuted)), colnames(x)[order]), "permuted location")
check(relative_error(ellipsa_scatter(permuted), scatter[order, order]) <= 1e-12, "permuted scatter")
check(relative_error(ellipsa_score(permuted, x)$squared_distance, scores$squared_distance) <= 1e-10,
      "scoring matches columns by name")

# ---- MCD flags planted outliers
planted <- c(7, 40, 41, 99, 150, 201, 230, 248)
y <- x
y[planted, ] <- sweep(y[planted, ], 2, c(9, -7, 6), "+")
robust <- ellipsa_fit(y, method = "mcd", seed = 42)
robust_scores <- ellipsa_score(robust, y)
flagged <- which(robust_scores$flag)
cat(sprintf("mcd: %d rows flagged, %d of %d planted\n", length(flagged),
            length(intersect(flagged, planted)), length(planted)))
check(all(planted %in% flagged), "every planted outlier is flagged")
check(length(setdiff(flagged, planted)) <= 20, "few clean rows flagged")
check(all(planted %in% ellipsa_rows(robust, "outliers")), "reweighting rule lists the planted rows")
check(!any(planted %in% ellipsa_rows(robust, "h_subset")), "planted rows are outside the h-subset")
check(ellipsa_diagnostic(robust, "h") == floor((n + p + 1) / 2), "h at alpha 0.5")
check(all(ellipsa_score(ellipsa_fit(y), y)$squared_distance[planted] <
            robust_scores$squared_distance[planted]), "outliers stand out more under MCD")
check(identical(ellipsa_save(ellipsa_fit(y, method = "mcd", seed = 42)), ellipsa_save(robust)),
      "same seed, same model")
check(length(ellipsa_diagnostics(robust)) >= 5 && "raw_log_det" %in% names(ellipsa_diagnostics(robust)),
      "diagnostics of an MCD model")
raw <- ellipsa_raw_estimate(robust)
check(identical(dim(raw$scatter), c(p, p)), "raw estimate")
invisible(capture.output(print(robust), print(summary(robust)), print(robust_scores)))

# ---- model file round trip
text <- ellipsa_save(robust)
check(is.character(text) && length(text) == 1 && grepl("format_version", text), "saved text")
reloaded <- ellipsa_load(text)
check(identical(ellipsa_save(reloaded), text), "save -> load -> save gives identical text")
check(identical(unclass(ellipsa_score(reloaded, with_na)), unclass(ellipsa_score(robust, with_na))),
      "a reloaded model gives identical scores")
model_file <- tempfile("ellipsa-roundtrip-", fileext = ".json")
ellipsa_save(robust, model_file)
check(identical(ellipsa_save(ellipsa_load(file = model_file)), text), "round trip through a file")

# ---- mixture: two invented clusters
z <- rbind(matrix(rnorm(300, 0, 1), 150, 2), matrix(rnorm(300, 6, 0.5), 150, 2))
mixture <- ellipsa_fit(z, method = "mixture", components = c(1, 3), seed = 7)
check(ellipsa_describe(mixture)$components == 2, "BIC chooses two components")
check(abs(sum(ellipsa_weights(mixture)) - 1) <= 1e-12, "weights sum to 1")
mixture_scores <- ellipsa_score(mixture, z)
check(identical(dim(mixture_scores$membership), c(300L, 2L)) &&
        max(abs(rowSums(mixture_scores$membership) - 1)) <= 1e-12, "memberships sum to 1")
check(nrow(ellipsa_selection(mixture)) == 3 && sum(ellipsa_selection(mixture)$chosen) == 1,
      "model-choice table")

# ---- distributions against base R
check(relative_error(ellipsa_chi2_quantile(c(0.5, 0.975, 0.999), 3), qchisq(c(0.5, 0.975, 0.999), 3)) <= 1e-12,
      "chi2 quantile")
check(relative_error(ellipsa_chi2_tail(c(0.1, 5, 60), 4), pchisq(c(0.1, 5, 60), 4, lower.tail = FALSE)) <= 1e-12,
      "chi2 tail")
check(relative_error(ellipsa_f_tail(2.5, 3, 40), pf(2.5, 3, 40, lower.tail = FALSE)) <= 1e-12, "F tail")
check(relative_error(ellipsa_beta_quantile(0.9, 2, 5), qbeta(0.9, 2, 5)) <= 1e-12, "Beta quantile")
check(identical(ellipsa_chi2_tail(c(1, NA), 2)[2], NA_real_), "NA in, NA out")

# ---- errors carry the status name and the library's message
e <- error_of(ellipsa_fit(matrix(rnorm(15), 3, 5)))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_DATA" &&
        grepl("ELLIPSA_ERR_DATA", conditionMessage(e), fixed = TRUE) &&
        grepl("ellipsa_model_fit", conditionMessage(e), fixed = TRUE),
      "classical fit of 3 x 5 fails with ELLIPSA_ERR_DATA and the library's message")
cat("3 x 5 classical fit:", conditionMessage(e), "\n")
e <- error_of(ellipsa_load("{}"))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_FORMAT" &&
        grepl("ELLIPSA_ERR_FORMAT", conditionMessage(e)), "loading {} fails with ELLIPSA_ERR_FORMAT")
e <- error_of(ellipsa_score(model, x[, 1:2]))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_SHAPE", "scoring with a missing column")
e <- error_of(ellipsa_score(model, unname(x[, 1:2])))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_SHAPE", "scoring with too few columns")
e <- error_of(ellipsa_fit(x, method = "mcd", alpha = 0.2))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_ARGUMENT", "alpha outside [0.5, 1]")
e <- error_of(ellipsa_fit(x, method = "no-such-method"))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_ARGUMENT", "unknown method")
inf_x <- x
inf_x[3, 2] <- Inf
e <- error_of(ellipsa_fit(inf_x))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_DATA", "an infinite value is refused")
e <- error_of(ellipsa_score(model, x, level = 1.5))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_ARGUMENT", "level outside (0, 1)")
# A handle restored from an R session file is empty: an error, not a crash.
rds <- tempfile("ellipsa-model-", fileext = ".rds")
saveRDS(model, rds)
e <- error_of(ellipsa_location(readRDS(rds)))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_NULL", "an empty handle")

# ---- names of methods, structures and missing-value policies, from the library.
# Expected names and codes: the ELLIPSA_METHOD_, ELLIPSA_STRUCTURE_ and
# ELLIPSA_MISSING_ macros and their documented names in capi/include/ellipsa.h.
method_names <- c("classical", "ledoit-wolf", "oas", "mcd", "detmcd", "mrcd", "mixture")
structure_names <- c("full", "diagonal", "tied", "spherical", "all")
missing_names <- c("drop", "refuse", "em")
check(identical(ellipsa_method_name(1:7), method_names), "method names of codes 1..7")
check(identical(ellipsa_method_from_name(method_names), 1:7), "method codes of their names")
check(identical(ellipsa_structure_name(1:5), structure_names), "structure names of codes 1..5")
check(identical(ellipsa_structure_from_name(structure_names), 1:5), "structure codes of their names")
check(identical(ellipsa_missing_name(c(1, 2, 3)), missing_names), "missing-value policy names of codes 1..3")
check(identical(ellipsa_missing_from_name(missing_names), 1:3), "missing-value policy codes of their names")
check(identical(ellipsa_structure_name(c(0L, 99L, NA)), c("unknown", "unknown", NA)),
      "codes the library does not know are named \"unknown\"; NA stays NA")
check(identical(ellipsa_missing_from_name(c("em", NA)), c(3L, NA)), "NA names stay NA")
e <- error_of(ellipsa_structure_from_name("banded"))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_ARGUMENT" &&
        all(vapply(structure_names, grepl, logical(1), conditionMessage(e), fixed = TRUE)),
      "an unknown structure name fails with a message listing the names")
e <- error_of(ellipsa_missing_from_name("impute"))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_ARGUMENT", "an unknown missing-value policy")
e <- error_of(ellipsa_fit(x, method = "mixture", components = 1, structure = "banded"))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_ARGUMENT", "fit with an unknown structure")
e <- error_of(ellipsa_structure_name(1.5))
check(inherits(e, "ellipsa_error") && e$status == "ELLIPSA_ERR_ARGUMENT", "a fractional code is refused")
check(all(ellipsa_selection(mixture)$structure %in% structure_names), "selection table names its structures")
cat("names: methods, structures, missing-value policies round-trip through the library\n")

# ---- optional file for the cross-binding check
cross_dir <- Sys.getenv("ELLIPSA_CROSS_DIR")
if (nzchar(cross_dir)) {
  dir.create(cross_dir, recursive = TRUE, showWarnings = FALSE)
  ellipsa_save(robust, file.path(cross_dir, "r_model.json"))
  cat("wrote", file.path(cross_dir, "r_model.json"), "\n")
}

# Finalizers run without trouble.
rm(model, robust, reloaded, permuted, mixture)
invisible(gc())
cat(sprintf("R binding smoke test: %d checks passed\n", checks))
