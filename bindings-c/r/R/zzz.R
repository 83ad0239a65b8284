# Installed as a package, the glue is the package's own DLL: resolve its
# routines when the namespace loads. (Sourced scripts call
# ellipsa_load_library() instead; this hook then never runs.)
.onLoad <- function(libname, pkgname) {
  dll <- getLoadedDLLs()[[pkgname]]
  routines <- lapply(.ellipsa_routine_names, function(name) getNativeSymbolInfo(name, dll))
  names(routines) <- .ellipsa_routine_names
  .ellipsa_state$routines <- routines
}
