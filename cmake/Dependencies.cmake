# Every dependency is a Debian package; a missing one stops configuration with
# one line naming the package (the full list is scripts/debian-packages.txt).
find_package(PkgConfig QUIET)
if(NOT PkgConfig_FOUND)
  message(FATAL_ERROR "pkg-config not found: install the Debian package 'pkg-config' (or run scripts/setup)")
endif()

function(sheaf_require_pkg var module debian)
  pkg_check_modules(${var} QUIET IMPORTED_TARGET ${module})
  if(NOT ${var}_FOUND)
    message(FATAL_ERROR "${module} not found: install the Debian package '${debian}' (or run scripts/setup)")
  endif()
endfunction()

function(sheaf_require_header var header debian)
  find_path(${var} ${header})
  if(NOT ${var})
    message(FATAL_ERROR "${header} not found: install the Debian package '${debian}' (or run scripts/setup)")
  endif()
endfunction()

sheaf_require_pkg(ICU "icu-uc;icu-i18n" libicu-dev)
sheaf_require_pkg(RE2 re2 libre2-dev)
sheaf_require_pkg(XXHASH libxxhash libxxhash-dev)
sheaf_require_pkg(ZLIB zlib zlib1g-dev)
sheaf_require_pkg(ZSTD libzstd libzstd-dev)
sheaf_require_pkg(LZMA liblzma liblzma-dev)
sheaf_require_pkg(TOMLPP tomlplusplus libtomlplusplus-dev)
# Hunspell reads the spelling dictionaries the language stage consults.
sheaf_require_pkg(HUNSPELL hunspell libhunspell-dev)

find_package(CLI11 CONFIG QUIET)
if(NOT CLI11_FOUND)
  message(FATAL_ERROR "CLI11 not found: install the Debian package 'libcli11-dev' (or run scripts/setup)")
endif()
find_package(nlohmann_json CONFIG QUIET)
if(NOT nlohmann_json_FOUND)
  message(FATAL_ERROR "nlohmann_json not found: install the Debian package 'nlohmann-json3-dev' (or run scripts/setup)")
endif()
find_package(TBB CONFIG QUIET)
if(NOT TBB_FOUND)
  message(FATAL_ERROR "oneTBB not found: install the Debian package 'libtbb-dev' (or run scripts/setup)")
endif()
sheaf_require_header(CLD2_INCLUDE cld2/public/compact_lang_det.h libcld2-dev)
find_library(CLD2_LIBRARY cld2)
if(NOT CLD2_LIBRARY)
  message(FATAL_ERROR "libcld2 not found: install the Debian package 'libcld2-dev' (or run scripts/setup)")
endif()
# libbz2-dev ships no pkg-config file: the header and the library.
sheaf_require_header(BZIP2_INCLUDE bzlib.h libbz2-dev)
find_library(BZIP2_LIBRARY bz2)
if(NOT BZIP2_LIBRARY)
  message(FATAL_ERROR "libbz2 not found: install the Debian package 'libbz2-dev' (or run scripts/setup)")
endif()
find_package(Threads REQUIRED)

add_library(sheaf_deps INTERFACE)
add_library(sheaf::deps ALIAS sheaf_deps)
target_include_directories(sheaf_deps INTERFACE ${CLD2_INCLUDE} ${BZIP2_INCLUDE})
target_link_libraries(sheaf_deps INTERFACE
  PkgConfig::ICU PkgConfig::RE2 PkgConfig::XXHASH PkgConfig::ZLIB PkgConfig::ZSTD PkgConfig::LZMA ${BZIP2_LIBRARY}
  PkgConfig::TOMLPP PkgConfig::HUNSPELL CLI11::CLI11 nlohmann_json::nlohmann_json TBB::tbb
  ${CLD2_LIBRARY} Threads::Threads)
