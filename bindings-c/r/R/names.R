# Names of the library's enumerations, from the library itself
# (ellipsa_method_name / _from_name, ellipsa_structure_name / _from_name,
# ellipsa_missing_name / _from_name in ellipsa.h): the binding keeps no table
# of these names. Vectorised; NA stays NA.

.ellipsa_name_kinds <- c(method = 1L, structure = 2L, missing = 3L)

.ellipsa_name <- function(kind, code) {
  if (!is.numeric(code) || any(!is.na(code) & (code != round(code) | abs(code) > .Machine$integer.max)))
    .ellipsa_stop("ELLIPSA_ERR_ARGUMENT: code must be whole numbers")
  .ellipsa_call("ellipsa_r_name", .ellipsa_name_kinds[[kind]], as.integer(code))
}

.ellipsa_from_name <- function(kind, name) {
  if (!is.character(name)) .ellipsa_stop("ELLIPSA_ERR_ARGUMENT: name must be a character vector")
  .ellipsa_call("ellipsa_r_from_name", .ellipsa_name_kinds[[kind]], enc2utf8(name))
}

# One name of a fit setting (structure, missing) as the library's code; NULL stays NULL.
.ellipsa_setting_code <- function(value, kind) {
  if (is.null(value)) return(NULL)
  if (!is.character(value) || length(value) != 1 || is.na(value))
    .ellipsa_stop(sprintf("ELLIPSA_ERR_ARGUMENT: %s must be one string", kind))
  .ellipsa_from_name(kind, value)
}

ellipsa_method_name <- function(code) .ellipsa_name("method", code)
ellipsa_method_from_name <- function(name) .ellipsa_from_name("method", name)
ellipsa_structure_name <- function(code) .ellipsa_name("structure", code)
ellipsa_structure_from_name <- function(name) .ellipsa_from_name("structure", name)
ellipsa_missing_name <- function(code) .ellipsa_name("missing", code)
ellipsa_missing_from_name <- function(name) .ellipsa_from_name("missing", name)
