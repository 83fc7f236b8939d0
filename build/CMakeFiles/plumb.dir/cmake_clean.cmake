file(REMOVE_RECURSE
  "CMakeFiles/plumb.dir/src/cli/main.cpp.o"
  "CMakeFiles/plumb.dir/src/cli/main.cpp.o.d"
  "plumb"
  "plumb.pdb"
)

# Per-language clean rules from dependency scanning.
foreach(lang CXX)
  include(CMakeFiles/plumb.dir/cmake_clean_${lang}.cmake OPTIONAL)
endforeach()
