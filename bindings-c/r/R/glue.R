# Building and loading the compiled glue (src/ellipsa_r.c), and the one place
# that calls into it. Nothing here computes: the numbers come from libellipsa.

.ellipsa_state <- new.env(parent = emptyenv())

.ellipsa_routine_names <- c(
  "ellipsa_r_fit", "ellipsa_r_describe", "ellipsa_r_component", "ellipsa_r_diagnostic",
  "ellipsa_r_row_set", "ellipsa_r_selection", "ellipsa_r_score", "ellipsa_r_save",
  "ellipsa_r_load", "ellipsa_r_distribution", "ellipsa_r_hotelling_limit", "ellipsa_r_version",
  "ellipsa_r_name", "ellipsa_r_from_name")

# Compiles the glue with `R CMD SHLIB` into out_dir and returns the path of the
# shared object. The source is copied first so the object files land in out_dir,
# never in the source tree.
#   r_dir:       bindings-c/r (holds src/ellipsa_r.c)
#   include_dir: the folder holding ellipsa.h (capi/include)
#   lib_dir:     the folder holding libellipsa.so (build/lib); recorded as rpath
ellipsa_build_glue <- function(r_dir, include_dir, lib_dir, out_dir = tempfile("ellipsa-r-")) {
  source_file <- file.path(r_dir, "src", "ellipsa_r.c")
  if (!file.exists(source_file)) stop("ellipsa: glue source not found: ", source_file)
  dir.create(out_dir, recursive = TRUE, showWarnings = FALSE)
  local_source <- file.path(out_dir, "ellipsa_r.c")
  if (!file.copy(source_file, local_source, overwrite = TRUE)) stop("ellipsa: cannot copy ", source_file)
  shared_object <- file.path(out_dir, paste0("ellipsa_r", .Platform$dynlib.ext))
  include_dir <- normalizePath(include_dir, mustWork = TRUE)
  lib_dir <- normalizePath(lib_dir, mustWork = TRUE)
  env <- c(paste0("PKG_CPPFLAGS=", shQuote(paste0("-I", include_dir))),
           paste0("PKG_LIBS=", shQuote(paste0("-L", lib_dir, " -lellipsa -Wl,-rpath,", lib_dir))))
  output <- system2(file.path(R.home("bin"), "R"),
                    c("CMD", "SHLIB", "-o", shQuote(shared_object), shQuote(local_source)),
                    env = env, stdout = TRUE, stderr = TRUE)
  status <- attr(output, "status")
  if (!is.null(status) && status != 0 || !file.exists(shared_object))
    stop("ellipsa: building the R glue failed:\n", paste(output, collapse = "\n"))
  shared_object
}

# Loads a compiled glue (from ellipsa_build_glue) and makes every ellipsa_*
# function usable. The file must keep the name ellipsa_r.<ext> so that R runs
# its registration routine. Warns when the loaded library's version differs
# from the header the glue was compiled against.
ellipsa_load_library <- function(glue_path) {
  glue_path <- normalizePath(glue_path, mustWork = TRUE)
  dll <- dyn.load(glue_path)
  routines <- lapply(.ellipsa_routine_names, function(name) getNativeSymbolInfo(name, dll))
  names(routines) <- .ellipsa_routine_names
  .ellipsa_state$routines <- routines
  versions <- ellipsa_version()
  if (versions[["library"]] != versions[["header"]])
    warning("ellipsa: library ", versions[["library"]], " loaded, glue compiled for ", versions[["header"]])
  invisible(versions)
}

# Calls a glue routine; errors from the library become conditions of class
# c("ellipsa_error", "error", "condition") whose `status` field is the status
# name (e.g. "ELLIPSA_ERR_SHAPE") and whose message carries ellipsa_last_error().
.ellipsa_call <- function(name, ...) {
  routine <- .ellipsa_state$routines[[name]]
  if (is.null(routine)) stop("ellipsa: the glue is not loaded; call ellipsa_load_library() first")
  caller <- sys.call(-1)
  tryCatch(.Call(routine, ...), error = function(e) .ellipsa_stop(conditionMessage(e), caller))
}

.ellipsa_stop <- function(message, call = NULL) {
  status <- if (grepl("^ELLIPSA_[A-Z_0-9]+: ", message)) sub(":.*$", "", message) else NA_character_
  stop(structure(class = c("ellipsa_error", "error", "condition"),
                 list(message = message, call = call, status = status)))
}

# Versions: the library actually loaded and the header the glue was built with.
ellipsa_version <- function() {
  v <- .ellipsa_call("ellipsa_r_version")
  c(library = v[1], header = v[2])
}
