# All dependencies are Debian packages installed by scripts/setup.sh; nothing is downloaded.
find_package(Threads REQUIRED)
find_package(Eigen3 3.3 REQUIRED NO_MODULE)
find_package(OpenCV REQUIRED COMPONENTS core imgproc imgcodecs)
find_package(yaml-cpp REQUIRED)
find_package(CLI11 REQUIRED)
find_package(nlohmann_json 3 REQUIRED)
find_package(ZLIB REQUIRED)
find_package(SQLite3 REQUIRED)
find_package(OpenSSL REQUIRED COMPONENTS Crypto)  # SHA-256 of cell and study keys

# Debian 12's NIfTI CMake config names a library path that does not exist, so locate the
# headers and libraries directly.
find_path(NIFTI_INCLUDE_DIR nifti1_io.h PATH_SUFFIXES nifti REQUIRED)
find_library(NIFTI_IO_LIBRARY niftiio REQUIRED)
find_library(NIFTI_ZNZ_LIBRARY znz REQUIRED)
add_library(frugal_nifti INTERFACE)
target_include_directories(frugal_nifti SYSTEM INTERFACE "${NIFTI_INCLUDE_DIR}")
target_link_libraries(frugal_nifti INTERFACE "${NIFTI_IO_LIBRARY}" "${NIFTI_ZNZ_LIBRARY}" ZLIB::ZLIB m)
target_compile_definitions(frugal_nifti INTERFACE HAVE_ZLIB)

# CPU libtorch, linked privately into experiments/learn only. Found once; its include
# directories are marked SYSTEM there so torch's own warnings do not count against frugal.
if(NOT Torch_FOUND)
  find_package(Torch REQUIRED)
endif()

if(FRUGAL_BUILD_TESTS)
  find_package(GTest REQUIRED)
  # The reference checks need Debian's python3 with its numpy/scipy/skimage/nibabel packages,
  # not whichever interpreter comes first on PATH.
  if(NOT Python3_EXECUTABLE AND EXISTS /usr/bin/python3)
    set(Python3_EXECUTABLE /usr/bin/python3)
  endif()
  find_package(Python3 REQUIRED COMPONENTS Interpreter)
endif()
if(FRUGAL_BUILD_BENCHMARKS)
  find_package(benchmark REQUIRED)
endif()
# Figures: PLplot's C++ binding and its C library (for the exit handler, plsexit); the cairo
# driver (plplot-driver-cairo) draws SVG, PNG and PDF.
find_package(PkgConfig REQUIRED)
pkg_check_modules(PLPLOT REQUIRED IMPORTED_TARGET plplot-c++ plplot)
