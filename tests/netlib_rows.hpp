// qualify tests: a minimal reader of the ROWS and COLUMNS sections of fixed-format MPS (test only).
// SPDX-License-Identifier: MIT
#pragma once

// Enough of the MPS format (IBM's fixed columns: fields at 2-3, 5-12, 15-22, 25-36, 40-47,
// 50-61) to extract the constraint matrix of the Netlib LP models; the library's own MPS
// reader is written elsewhere. RHS, RANGES and BOUNDS are not read.

#include <Eigen/SparseCore>
#include <fstream>
#include <map>
#include <string>
#include <vector>

namespace qualify_test {

struct mps_rows {
  bool ok = false;
  std::string message;
  std::vector<std::string> row_names;  ///< constraint rows (N rows left out), in file order
  std::vector<char> row_types;         ///< 'E', 'L' or 'G'
  std::vector<std::string> col_names;
  std::size_t objective_entries = 0;            ///< COLUMNS entries on N rows
  std::vector<Eigen::Triplet<double>> entries;  ///< (constraint row, column, value)
};

inline std::string mps_field(const std::string& line, std::size_t begin, std::size_t end) {
  if (line.size() <= begin) return {};
  std::string f = line.substr(begin, end - begin);
  const auto a = f.find_first_not_of(' ');
  if (a == std::string::npos) return {};
  return f.substr(a, f.find_last_not_of(' ') - a + 1);
}

inline mps_rows read_mps_rows(const std::string& path) {
  mps_rows out;
  std::ifstream in(path);
  if (!in) {
    out.message = "cannot open " + path;
    return out;
  }
  std::map<std::string, int> row_index;  // -1: an N row
  std::map<std::string, int> col_index;
  std::string line, section;
  int line_no = 0;
  while (std::getline(in, line)) {
    ++line_no;
    if (!line.empty() && line.back() == '\r') line.pop_back();
    if (line.empty() || line[0] == '*') continue;
    if (line[0] != ' ') {
      section = mps_field(line, 0, 14);
      if (section.rfind("NAME", 0) == 0) section = "NAME";
      if (section == "ENDATA") break;
      continue;
    }
    if (section == "ROWS") {
      const std::string type = mps_field(line, 1, 3), name = mps_field(line, 4, 12);
      if (type == "N") {
        row_index[name] = -1;
      } else if (type == "E" || type == "L" || type == "G") {
        row_index[name] = int(out.row_names.size());
        out.row_names.push_back(name);
        out.row_types.push_back(type[0]);
      } else {
        out.message = "line " + std::to_string(line_no) + ": row type '" + type + "'";
        return out;
      }
    } else if (section == "COLUMNS") {
      const std::string col = mps_field(line, 4, 12);
      auto [it, fresh] = col_index.emplace(col, int(out.col_names.size()));
      if (fresh) out.col_names.push_back(col);
      for (auto [name_at, value_at] : {std::pair<std::size_t, std::size_t>{14, 24}, {39, 49}}) {
        const std::string row = mps_field(line, name_at, name_at + 8);
        if (row.empty()) continue;
        const auto r = row_index.find(row);
        if (r == row_index.end()) {
          out.message = "line " + std::to_string(line_no) + ": unknown row '" + row + "'";
          return out;
        }
        const double value = std::stod(mps_field(line, value_at, value_at + 12));
        if (r->second < 0)
          ++out.objective_entries;
        else
          out.entries.emplace_back(r->second, it->second, value);
      }
    }
  }
  out.ok = true;
  return out;
}

}  // namespace qualify_test
