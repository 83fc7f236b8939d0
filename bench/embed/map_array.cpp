// The C++ library's side of bench/embed/python_map.py: load a map artifact
// and map an array of doubles in memory, as a service linking plumb::core
// would (plumb::load_artifact, CalibrationMap::map), timed around the loop
// only. Prints the best of REPEAT runs in seconds of CPU time (this thread)
// and of wall time, and a checksum of the probabilities.
//   plumb_bench_map_array MAP SCORES.f64 REPEAT
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <ctime>
#include <fstream>
#include <vector>

#include "plumb/io/artifact.hpp"

namespace {
double thread_cpu_seconds() {
  timespec t{};
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &t);
  return static_cast<double>(t.tv_sec) + 1e-9 * static_cast<double>(t.tv_nsec);
}
}  // namespace

int main(int argc, char** argv) {
  if (argc != 4) {
    std::fprintf(stderr, "usage: plumb_bench_map_array MAP SCORES.f64 REPEAT\n");
    return 2;
  }
  const plumb::Artifact artifact = plumb::load_artifact(argv[1]);
  std::ifstream in(argv[2], std::ios::binary | std::ios::ate);
  const auto bytes = static_cast<std::size_t>(in.tellg());
  std::vector<double> scores(bytes / sizeof(double));
  in.seekg(0);
  in.read(reinterpret_cast<char*>(scores.data()), static_cast<std::streamsize>(scores.size() * sizeof(double)));
  std::vector<double> out(scores.size());
  const plumb::CalibrationMap& map = *artifact.map;
  double best_cpu = 1e300, best_wall = 1e300, sum = 0.0;
  for (int r = 0; r < std::atoi(argv[3]); ++r) {
    const double c0 = thread_cpu_seconds();
    const auto w0 = std::chrono::steady_clock::now();
    for (std::size_t i = 0; i < scores.size(); ++i) out[i] = map.map(scores[i]).probability;
    const double wall = std::chrono::duration<double>(std::chrono::steady_clock::now() - w0).count();
    const double cpu = thread_cpu_seconds() - c0;
    best_cpu = std::min(best_cpu, cpu);
    best_wall = std::min(best_wall, wall);
    sum = 0.0;
    for (double p : out) sum += p;
  }
  std::printf("%.6f %.6f %.17g\n", best_cpu, best_wall, sum);
  return 0;
}
