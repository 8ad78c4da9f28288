# The Python module `firmcall` (python/): a pybind11 extension firmcall/_native with the package's
# __init__.py beside it in <build>/python, installed under <prefix>/lib/python3/dist-packages
# (FIRMCALL_PYTHON_DIR). Needs pybind11 (Debian: pybind11-dev, python3-dev); on by default when
# pybind11 is found. docs/python.md describes the module.
# Debian's python3 (with numpy and pandas) unless told otherwise, not another python3 on PATH.
if(NOT DEFINED Python3_EXECUTABLE AND EXISTS /usr/bin/python3)
  set(Python3_EXECUTABLE /usr/bin/python3)
endif()
find_package(Python3 COMPONENTS Interpreter Development.Module QUIET)
if(Python3_FOUND)
  find_package(pybind11 CONFIG QUIET)
endif()
set(FIRMCALL_PYTHON_DEFAULT OFF)
if(pybind11_FOUND AND NOT FIRMCALL_SANITIZE AND NOT FIRMCALL_FUZZ)
  set(FIRMCALL_PYTHON_DEFAULT ON)
endif()
option(FIRMCALL_PYTHON "Build the Python module (needs pybind11-dev and python3-dev)" ${FIRMCALL_PYTHON_DEFAULT})
set(FIRMCALL_PYTHON_DIR lib/python3/dist-packages CACHE STRING
  "Where the Python package firmcall/ is installed, relative to the prefix")

if(FIRMCALL_PYTHON)
  if(NOT pybind11_FOUND)
    message(FATAL_ERROR "FIRMCALL_PYTHON needs pybind11 (Debian: apt-get install pybind11-dev python3-dev)")
  endif()
  set(FIRMCALL_PYTHON_BUILD_DIR ${PROJECT_BINARY_DIR}/python)
  pybind11_add_module(firmcall_python MODULE python/firmcall_module.cpp)
  set_target_properties(firmcall_python PROPERTIES OUTPUT_NAME _native
    LIBRARY_OUTPUT_DIRECTORY ${FIRMCALL_PYTHON_BUILD_DIR}/firmcall)
  target_compile_options(firmcall_python PRIVATE ${FIRMCALL_WARNINGS})
  target_link_libraries(firmcall_python PRIVATE firmcall_engine)
  set(FIRMCALL_VERSION ${PROJECT_VERSION})
  configure_file(python/firmcall/__init__.py ${FIRMCALL_PYTHON_BUILD_DIR}/firmcall/__init__.py @ONLY)
  install(TARGETS firmcall_python LIBRARY DESTINATION ${FIRMCALL_PYTHON_DIR}/firmcall)
  install(FILES ${FIRMCALL_PYTHON_BUILD_DIR}/firmcall/__init__.py DESTINATION ${FIRMCALL_PYTHON_DIR}/firmcall)
endif()
