// qualify: reads the Netlib INDEX.csv beside the data (shared by tests and benchmarks).
// SPDX-License-Identifier: MIT
#pragma once

#include <cstdlib>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

namespace qualify_test {

/// One row of INDEX.csv: the figures of the Netlib lp/data readme.
struct netlib_entry {
  std::string file;
  long rows = 0;  ///< objective row included
  long cols = 0;
  long nonzeros = 0;  ///< objective row included
  std::string bounds_ranges;
  double optimal_value = 0.0;
  std::string note;
};

/// Entries of `dir`/INDEX.csv; empty when the file is missing. The note is the last field
/// and may contain commas.
inline std::vector<netlib_entry> read_netlib_index(const std::string& dir) {
  std::vector<netlib_entry> entries;
  std::ifstream in(dir + "/INDEX.csv");
  std::string line;
  std::getline(in, line);  // header
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::vector<std::string> f;
    std::size_t start = 0;
    for (int k = 0; k < 6; ++k) {
      std::size_t comma = line.find(',', start);
      if (comma == std::string::npos) break;
      f.push_back(line.substr(start, comma - start));
      start = comma + 1;
    }
    if (f.size() != 6) continue;
    netlib_entry e;
    e.file = f[0];
    e.rows = std::strtol(f[1].c_str(), nullptr, 10);
    e.cols = std::strtol(f[2].c_str(), nullptr, 10);
    e.nonzeros = std::strtol(f[3].c_str(), nullptr, 10);
    e.bounds_ranges = f[4];
    e.optimal_value = std::strtod(f[5].c_str(), nullptr);
    e.note = line.substr(start);
    entries.push_back(e);
  }
  return entries;
}

/// The relative tolerance for comparing with the published optimum: 1e-6, except where
/// INDEX.csv's note says otherwise (scrs8: 1e-5, a known erratum of the published figure).
inline double netlib_tolerance(const netlib_entry& e) {
  return e.file == "scrs8.mps" ? 1e-5 : 1e-6;
}

}  // namespace qualify_test
