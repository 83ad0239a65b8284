# Runs at install time (from install(CODE) in cmake/install.cmake), after
# ELLIPSA_PC_TEMPLATE, ELLIPSA_PC_WORK_DIR, ELLIPSA_PC_LIBDIR,
# ELLIPSA_PC_INCLUDEDIR (GNUInstallDirs values: relative to the prefix, or
# absolute) and ELLIPSA_PC_VERSION have been set. Writes ellipsa.pc for the
# prefix being installed to and installs it under <libdir>/pkgconfig.
set(prefix "${CMAKE_INSTALL_PREFIX}")
set(libdir_abs "${ELLIPSA_PC_LIBDIR}")
foreach(kind LIBDIR INCLUDEDIR)
  set(dir "${ELLIPSA_PC_${kind}}")
  if(IS_ABSOLUTE "${dir}")
    set(PC_${kind} "${dir}")
  else()
    # Relative to ${prefix} inside the file, so pkg-config's --define-prefix works.
    set(PC_${kind} "\${prefix}/${dir}")
  endif()
endforeach()
if(NOT IS_ABSOLUTE "${libdir_abs}")
  set(libdir_abs "${prefix}/${libdir_abs}")
endif()
set(PC_PREFIX "${prefix}")
set(PC_VERSION "${ELLIPSA_PC_VERSION}")
# One work folder per destination, so that installs to two places at once
# cannot hand each other their file.
string(MD5 destination "$ENV{DESTDIR}${libdir_abs}")
set(work "${ELLIPSA_PC_WORK_DIR}/${destination}")
configure_file("${ELLIPSA_PC_TEMPLATE}" "${work}/ellipsa.pc" @ONLY)
file(INSTALL DESTINATION "${libdir_abs}/pkgconfig" TYPE FILE FILES "${work}/ellipsa.pc")
