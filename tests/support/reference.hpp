#pragma once
// Helpers for reference checks: run an R script that writes its case and its
// answers as numeric CSV files, and read those files back. Kept apart from
// plumb's own reader so that a reader bug cannot hide inside a reference check.
#include <map>
#include <string>
#include <vector>

namespace plumb::test {

// A fresh empty directory under the test binary directory, private to this
// process.
std::string scratch_dir(const std::string& name);

// Runs `Rscript tests/reference/<script> <out_dir>`; fails the test (throws)
// when R exits non-zero. R's output goes to <out_dir>/R.log.
void run_r(const std::string& script, const std::string& out_dir);

// Reads a CSV with a header row and numeric cells ("NA" becomes NaN) into
// columns by name.
std::map<std::string, std::vector<double>> read_numeric_csv(const std::string& path);

}  // namespace plumb::test
