# qualify: finds SuiteSparse's SPQR (with CHOLMOD and SuiteSparse_config) and defines qualify::suitesparse.
# SPDX-License-Identifier: MIT
#
# Used by the build and by the installed package config, so that a host finds the same
# libraries qualify was configured with. Sets QUALIFY_SUITESPARSE_FOUND.
if(TARGET qualify::suitesparse)
  set(QUALIFY_SUITESPARSE_FOUND TRUE)
  return()
endif()
find_path(QUALIFY_SPQR_INCLUDE_DIR SuiteSparseQR.hpp PATH_SUFFIXES suitesparse
          DOC "folder holding SuiteSparseQR.hpp (Debian: /usr/include/suitesparse)")
find_library(QUALIFY_SPQR_LIBRARY spqr DOC "SuiteSparse's SPQR library")
find_library(QUALIFY_CHOLMOD_LIBRARY cholmod DOC "SuiteSparse's CHOLMOD library")
find_library(QUALIFY_SUITESPARSECONFIG_LIBRARY suitesparseconfig
             DOC "SuiteSparse's SuiteSparse_config library")
if(QUALIFY_SPQR_INCLUDE_DIR AND QUALIFY_SPQR_LIBRARY AND QUALIFY_CHOLMOD_LIBRARY
   AND QUALIFY_SUITESPARSECONFIG_LIBRARY)
  set(QUALIFY_SUITESPARSE_FOUND TRUE)
  add_library(qualify::suitesparse INTERFACE IMPORTED GLOBAL)
  set_target_properties(qualify::suitesparse PROPERTIES
    INTERFACE_INCLUDE_DIRECTORIES "${QUALIFY_SPQR_INCLUDE_DIR}"
    INTERFACE_LINK_LIBRARIES
      "${QUALIFY_SPQR_LIBRARY};${QUALIFY_CHOLMOD_LIBRARY};${QUALIFY_SUITESPARSECONFIG_LIBRARY}")
else()
  set(QUALIFY_SUITESPARSE_FOUND FALSE)
endif()
