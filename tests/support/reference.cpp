#include "support/reference.hpp"

#include <unistd.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <stdexcept>

namespace plumb::test {

std::string scratch_dir(const std::string& name) {
  // One directory per process: CTest runs test cases of this binary as
  // separate processes in parallel, and two of them may ask R for the same
  // case at once.
  const std::filesystem::path dir =
      std::filesystem::path(PLUMB_TEST_BINARY_DIR) / "scratch" / (name + "." + std::to_string(::getpid()));
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  return dir.string();
}

void run_r(const std::string& script, const std::string& out_dir) {
  const std::string path = std::string(PLUMB_TEST_SOURCE_DIR) + "/reference/" + script;
  const std::string cmd = "Rscript --vanilla '" + path + "' '" + out_dir + "' > '" + out_dir +
                          "/R.log' 2>&1";
  const int rc = std::system(cmd.c_str());
  if (rc != 0) throw std::runtime_error("R failed (" + std::to_string(rc) + "): see " + out_dir + "/R.log");
}

std::map<std::string, std::vector<double>> read_numeric_csv(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot open " + path);
  std::string line;
  std::getline(in, line);
  std::vector<std::string> names;
  {
    std::stringstream ss(line);
    std::string cell;
    while (std::getline(ss, cell, ',')) {
      if (cell.size() >= 2 && cell.front() == '"' && cell.back() == '"') cell = cell.substr(1, cell.size() - 2);
      names.push_back(cell);
    }
  }
  std::map<std::string, std::vector<double>> cols;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::stringstream ss(line);
    std::string cell;
    std::size_t j = 0;
    while (std::getline(ss, cell, ',')) {
      if (j >= names.size()) throw std::runtime_error("ragged row in " + path);
      cols[names[j++]].push_back(cell == "NA" ? std::nan("") : std::stod(cell));
    }
    if (j != names.size()) throw std::runtime_error("short row in " + path);
  }
  return cols;
}

}  // namespace plumb::test
