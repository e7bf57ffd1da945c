// qualify: doctest assertions on reports that print the full report, rows by label, on failure.
// SPDX-License-Identifier: MIT
#pragma once

#include <qualify/format.hpp>
#include <qualify/qualify.hpp>

#ifndef DOCTEST_VERSION_MAJOR
#error "include <doctest/doctest.h> before <qualify/doctest.hpp>"
#endif

namespace doctest {
template <>
struct StringMaker<qualify::kkt_classification> {
  static String convert(qualify::kkt_classification c) {
    const auto s = qualify::to_string(c);
    return String(s.data(), static_cast<unsigned>(s.size()));
  }
};
template <>
struct StringMaker<qualify::verdict> {
  static String convert(qualify::verdict v) {
    const auto s = qualify::to_string(v);
    return String(s.data(), static_cast<unsigned>(s.size()));
  }
};
}  // namespace doctest

/// Checks that `report` (any qualify report) has the verdict `expected`; on failure the full
/// report is printed, so the offending constraints show by label.
#define QUALIFY_CHECK_VERDICT(report, expected) \
  CHECK_MESSAGE((report).result == (expected), ::fmt::format("{:f}", (report)))
#define QUALIFY_REQUIRE_VERDICT(report, expected) \
  REQUIRE_MESSAGE((report).result == (expected), ::fmt::format("{:f}", (report)))
#define QUALIFY_CHECK_HOLDS(report) QUALIFY_CHECK_VERDICT(report, ::qualify::verdict::holds)
#define QUALIFY_REQUIRE_HOLDS(report) QUALIFY_REQUIRE_VERDICT(report, ::qualify::verdict::holds)
#define QUALIFY_CHECK_FAILS(report) QUALIFY_CHECK_VERDICT(report, ::qualify::verdict::fails)

/// Checks that a kkt_report classifies the point as `expected` (a qualify::kkt_classification);
/// on failure the full report is printed.
#define QUALIFY_CHECK_CLASSIFICATION(report, expected) \
  CHECK_MESSAGE((report).classification == (expected), ::fmt::format("{:f}", (report)))
#define QUALIFY_REQUIRE_CLASSIFICATION(report, expected) \
  REQUIRE_MESSAGE((report).classification == (expected), ::fmt::format("{:f}", (report)))
