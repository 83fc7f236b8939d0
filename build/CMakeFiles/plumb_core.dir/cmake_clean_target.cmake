file(REMOVE_RECURSE
  "libplumb.a"
)
