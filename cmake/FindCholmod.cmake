# SuiteSparse 5.x on Debian ships no CMake config: find CHOLMOD by hand and
# expose it as levelhead::cholmod.
find_path(CHOLMOD_INCLUDE_DIR cholmod.h PATH_SUFFIXES suitesparse REQUIRED)
find_library(CHOLMOD_LIBRARY cholmod REQUIRED)
find_library(SUITESPARSE_CONFIG_LIBRARY suitesparseconfig REQUIRED)
add_library(levelhead::cholmod INTERFACE IMPORTED)
set_target_properties(levelhead::cholmod PROPERTIES
  INTERFACE_INCLUDE_DIRECTORIES "${CHOLMOD_INCLUDE_DIR}"
  INTERFACE_LINK_LIBRARIES "${CHOLMOD_LIBRARY};${SUITESPARSE_CONFIG_LIBRARY}")
