file(REMOVE_RECURSE
  "CMakeFiles/plumb_tests.dir/support/main.cpp.o"
  "CMakeFiles/plumb_tests.dir/support/main.cpp.o.d"
  "CMakeFiles/plumb_tests.dir/support/reference.cpp.o"
  "CMakeFiles/plumb_tests.dir/support/reference.cpp.o.d"
  "plumb_tests"
  "plumb_tests.pdb"
  "plumb_tests_tests-b12d07c.cmake"
)

# Per-language clean rules from dependency scanning.
foreach(lang CXX)
  include(CMakeFiles/plumb_tests.dir/cmake_clean_${lang}.cmake OPTIONAL)
endforeach()
