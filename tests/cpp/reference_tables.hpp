// Test helpers: reading checked-in reference CSV tables and comparing with stated tolerances.
#pragma once

#include <catch2/catch.hpp>
#include <cmath>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

namespace qamsight::test {

/// Rows of a CSV file as string cells (no quoting; reference tables are plain).
inline std::vector<std::vector<std::string>> read_csv(const std::string& path) {
  std::ifstream in(path);
  REQUIRE(in.good());
  std::vector<std::vector<std::string>> rows;
  std::string line;
  while (std::getline(in, line)) {
    std::vector<std::string> cells;
    std::stringstream ss(line);
    std::string cell;
    while (std::getline(ss, cell, ',')) cells.push_back(cell);
    if (!line.empty() && line.back() == ',') cells.emplace_back();
    rows.push_back(cells);
  }
  return rows;
}

inline std::string source_path(const std::string& relative) {
  return std::string(QAMSIGHT_SOURCE_DIR) + "/" + relative;
}

/// |actual - expected| <= rel * |expected| + abs.
inline void check_close(double actual, double expected, double rel, double abs = 0.0) {
  INFO("actual " << actual << " expected " << expected << " rel tol " << rel << " abs tol " << abs);
  CHECK(std::abs(actual - expected) <= rel * std::abs(expected) + abs);
}

}  // namespace qamsight::test
