file(REMOVE_RECURSE
  "CMakeFiles/plumb_core.dir/src/core/error.cpp.o"
  "CMakeFiles/plumb_core.dir/src/core/error.cpp.o.d"
  "CMakeFiles/plumb_core.dir/src/core/scale.cpp.o"
  "CMakeFiles/plumb_core.dir/src/core/scale.cpp.o.d"
  "libplumb.a"
  "libplumb.pdb"
)

# Per-language clean rules from dependency scanning.
foreach(lang CXX)
  include(CMakeFiles/plumb_core.dir/cmake_clean_${lang}.cmake OPTIONAL)
endforeach()
