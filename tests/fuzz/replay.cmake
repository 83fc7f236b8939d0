# The fuzz targets' entry points without libFuzzer, built by any compiler in
# the ordinary test build: each replays the committed regression inputs
# (tests/fuzz/regressions/TARGET, inputs that once failed) and seed corpora
# once, so that a fixed fault stays fixed in every build, sanitized or not.
file(GLOB PLUMB_FUZZ_SOURCES CONFIGURE_DEPENDS ${CMAKE_CURRENT_LIST_DIR}/fuzz_*.cpp)
foreach(source IN LISTS PLUMB_FUZZ_SOURCES)
  get_filename_component(target ${source} NAME_WE)
  add_executable(${target}_replay ${source} ${CMAKE_CURRENT_LIST_DIR}/replay_main.cpp)
  target_include_directories(${target}_replay PRIVATE ${CMAKE_CURRENT_LIST_DIR} ${PROJECT_SOURCE_DIR}/src)
  target_link_libraries(${target}_replay PRIVATE plumb_core)
  target_compile_options(${target}_replay PRIVATE ${PLUMB_WARNINGS})
  add_test(NAME fuzz.replay.${target}
           COMMAND ${target}_replay ${CMAKE_CURRENT_LIST_DIR}/regressions/${target}
                   ${CMAKE_CURRENT_LIST_DIR}/corpus/${target})
endforeach()
