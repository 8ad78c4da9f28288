# Installs the build into a fresh prefix, checks the tree, then configures, builds and runs the two
# consumer projects in tests/install/ against it (find_package and pkg-config).
#   cmake -DBUILD_DIR=... -DSOURCE_DIR=... -DWORK=... -P check_install.cmake
file(REMOVE_RECURSE ${WORK})
set(prefix ${WORK}/prefix)
function(run)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE err)
  if(NOT rc EQUAL 0)
    message(FATAL_ERROR "failed (${rc}): ${ARGN}\n${out}\n${err}")
  endif()
  set(run_output "${out}" PARENT_SCOPE)
endfunction()

run(${CMAKE_COMMAND} --install ${BUILD_DIR} --prefix ${prefix})
foreach(f bin/firmcall include/firmcall/firmcall.hpp include/firmcall/model/merton_solver.hpp
    lib/libfirmcall_model.a lib/libfirmcall_report.a lib/cmake/firmcall/firmcallConfig.cmake
    lib/cmake/firmcall/firmcallConfigVersion.cmake lib/pkgconfig/firmcall.pc share/man/man1/firmcall.1
    share/firmcall/samples/demo_book.csv share/firmcall/config/firmcall.yaml)
  if(NOT EXISTS ${prefix}/${f})
    message(FATAL_ERROR "the install tree lacks ${f}")
  endif()
endforeach()
file(READ ${prefix}/share/man/man1/firmcall.1 man)
foreach(section "\\.SH COMMANDS" "\\.SS score" "\\.SS calibrate" "--pd-calibration")
  if(NOT man MATCHES "${section}")
    message(FATAL_ERROR "the man page lacks ${section}")
  endif()
endforeach()
run(${prefix}/bin/firmcall --version)
if(NOT run_output MATCHES "^firmcall [0-9]")
  message(FATAL_ERROR "installed firmcall --version printed: ${run_output}")
endif()

# The consumers, with the compiler of this build (cmake's math has no decimals: python3 compares).
foreach(consumer find_package pkg_config)
  set(b ${WORK}/${consumer})
  if(consumer STREQUAL find_package)
    set(where -DCMAKE_PREFIX_PATH=${prefix})
  else()
    set(where -DPKG_CONFIG_USE_CMAKE_PREFIX_PATH=OFF)  # found only through PKG_CONFIG_PATH
  endif()
  run(${CMAKE_COMMAND} -E env PKG_CONFIG_PATH=${prefix}/lib/pkgconfig
    ${CMAKE_COMMAND} -S ${SOURCE_DIR}/tests/install/${consumer} -B ${b} -DCMAKE_BUILD_TYPE=Release
    -DCMAKE_CXX_COMPILER=${CXX} ${where})
  run(${CMAKE_COMMAND} --build ${b})
endforeach()

# Outside reference: Hull, "Options, Futures, and Other Derivatives" (8th ed., Example 14.6):
# S0 = 42, K = 40, r = 0.1, sigma = 0.2, T = 0.5 give d1 = 0.7693, d2 = 0.6278, c = 4.76, p = 0.81.
function(expect text name value tolerance)
  if(NOT text MATCHES "${name} ([-0-9.]+)")
    message(FATAL_ERROR "no '${name}' in: ${text}")
  endif()
  set(got ${CMAKE_MATCH_1})
  execute_process(COMMAND ${PYTHON} -c "import sys; sys.exit(0 if abs(${got} - ${value}) <= ${tolerance} else 1)"
    RESULT_VARIABLE rc)
  if(NOT rc EQUAL 0)
    message(FATAL_ERROR "${name}: got ${got}, expected ${value} +- ${tolerance}")
  endif()
  message(STATUS "${name} ${got} (reference ${value})")
endfunction()
foreach(program hull_call hull_call_model_only)
  run(${WORK}/find_package/${program})
  expect("${run_output}" call 4.76 0.005)
  expect("${run_output}" put 0.81 0.005)
  expect("${run_output}" d1 0.7693 0.00005)
  expect("${run_output}" d2 0.6278 0.00005)
endforeach()
run(${WORK}/pkg_config/hull_solve)
expect("${run_output}" equity 4.76 0.005)
expect("${run_output}" asset_value 42 1e-6)
expect("${run_output}" asset_vol 0.2 1e-6)
file(REMOVE_RECURSE ${WORK})
