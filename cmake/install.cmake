# Installing firmcall: `cmake --install build --prefix P` puts
#   P/bin/firmcall                                  the command
#   P/include/firmcall/...                          the headers (umbrella: firmcall/firmcall.hpp)
#   P/lib/libfirmcall_<layer>.a                     one static library per layer
#   P/lib/cmake/firmcall/firmcallConfig.cmake       find_package(firmcall): firmcall::firmcall (every
#     (+ ConfigVersion, Targets)                      layer) and firmcall::<layer>
#   P/lib/pkgconfig/firmcall.pc                     pkg-config --cflags --libs firmcall
#   P/share/man/man1/firmcall.1                     the man page, made from the commands' --help
#   P/share/firmcall/samples/, config/              the invented sample books and the shipped settings
# docs/install.md describes the tree and the two ways of building against it.
include(GNUInstallDirs)
include(CMakePackageConfigHelpers)

set(FIRMCALL_CMAKE_DIR ${CMAKE_INSTALL_LIBDIR}/cmake/firmcall)
get_property(FIRMCALL_LAYER_NAMES GLOBAL PROPERTY FIRMCALL_LAYERS)

# firmcall::firmcall: the whole library in one name (the umbrella header includes every layer).
add_library(firmcall_library INTERFACE)
set_target_properties(firmcall_library PROPERTIES EXPORT_NAME firmcall)
set(FIRMCALL_LAYER_TARGETS "")
foreach(layer IN LISTS FIRMCALL_LAYER_NAMES)
  list(APPEND FIRMCALL_LAYER_TARGETS firmcall_${layer})
endforeach()
target_link_libraries(firmcall_library INTERFACE ${FIRMCALL_LAYER_TARGETS})

install(TARGETS firmcall RUNTIME DESTINATION ${CMAKE_INSTALL_BINDIR})
install(TARGETS ${FIRMCALL_LAYER_TARGETS} firmcall_library EXPORT firmcallTargets
  ARCHIVE DESTINATION ${CMAKE_INSTALL_LIBDIR}
  LIBRARY DESTINATION ${CMAKE_INSTALL_LIBDIR}
  INCLUDES DESTINATION ${CMAKE_INSTALL_INCLUDEDIR})
install(DIRECTORY include/firmcall DESTINATION ${CMAKE_INSTALL_INCLUDEDIR} FILES_MATCHING PATTERN "*.hpp")
install(EXPORT firmcallTargets NAMESPACE firmcall:: DESTINATION ${FIRMCALL_CMAKE_DIR})
configure_package_config_file(cmake/firmcallConfig.cmake.in ${PROJECT_BINARY_DIR}/firmcallConfig.cmake
  INSTALL_DESTINATION ${FIRMCALL_CMAKE_DIR})
write_basic_package_version_file(${PROJECT_BINARY_DIR}/firmcallConfigVersion.cmake
  VERSION ${PROJECT_VERSION} COMPATIBILITY SameMinorVersion)
install(FILES ${PROJECT_BINARY_DIR}/firmcallConfig.cmake ${PROJECT_BINARY_DIR}/firmcallConfigVersion.cmake
  DESTINATION ${FIRMCALL_CMAKE_DIR})

# pkg-config: the layers from the top down, then what they link (static libraries carry no
# dependencies of their own, so every one is listed).
set(FIRMCALL_PC_LIBS "")
list(REVERSE FIRMCALL_LAYER_NAMES)
foreach(layer IN LISTS FIRMCALL_LAYER_NAMES)
  string(APPEND FIRMCALL_PC_LIBS " -lfirmcall_${layer}")
endforeach()
configure_file(cmake/firmcall.pc.in ${PROJECT_BINARY_DIR}/firmcall.pc @ONLY)
install(FILES ${PROJECT_BINARY_DIR}/firmcall.pc DESTINATION ${CMAKE_INSTALL_LIBDIR}/pkgconfig)

install(DIRECTORY samples/ DESTINATION ${CMAKE_INSTALL_DATADIR}/firmcall/samples)
install(FILES config/firmcall.yaml DESTINATION ${CMAKE_INSTALL_DATADIR}/firmcall/config)

# The man page: help2man (Debian: help2man) on `firmcall --help`, with a section holding every
# command's own --help (cmake/man_page.cmake). Without help2man there is no man page.
find_program(FIRMCALL_HELP2MAN help2man)
if(FIRMCALL_HELP2MAN)
  add_custom_command(OUTPUT ${PROJECT_BINARY_DIR}/firmcall.1
    COMMAND ${CMAKE_COMMAND} -DFIRMCALL=$<TARGET_FILE:firmcall> -DHELP2MAN=${FIRMCALL_HELP2MAN}
      -DOUT=${PROJECT_BINARY_DIR}/firmcall.1 -DWORK=${PROJECT_BINARY_DIR}/man_page
      -P ${PROJECT_SOURCE_DIR}/cmake/man_page.cmake
    DEPENDS firmcall ${PROJECT_SOURCE_DIR}/cmake/man_page.cmake
    COMMENT "Writing the man page firmcall.1")
  add_custom_target(firmcall_man_page ALL DEPENDS ${PROJECT_BINARY_DIR}/firmcall.1)
  install(FILES ${PROJECT_BINARY_DIR}/firmcall.1 DESTINATION ${CMAKE_INSTALL_MANDIR}/man1)
else()
  message(STATUS "help2man not found: no man page (Debian: apt-get install help2man)")
endif()
