// qualify: tests of the Matrix Market reader and writer against the format's specification.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <Eigen/Dense>
#include <Eigen/SparseCore>
#include <algorithm>
#include <filesystem>
#include <fstream>
#include <qualify/matrix_market.hpp>
#include <random>
#include <sstream>
#include <string>

#include "temp_dir.hpp"

namespace fs = std::filesystem;
using qualify::matrix_market_data;
using qualify::matrix_market_field;
using qualify::matrix_market_format;
using qualify::parse_matrix_market;
using qualify::read_error;

namespace {

// Checks a malformed input: not ok, the error kind, the 1-based line, a word of the message.
void check_malformed(const std::string& text, std::size_t line, const std::string& words) {
  matrix_market_data data = parse_matrix_market(text);
  INFO("input:\n" << text << "\nmessage: " << data.message);
  CHECK_FALSE(data.ok);
  CHECK(data.error == read_error::malformed);
  REQUIRE(data.line.has_value());
  CHECK(*data.line == line);
  CHECK(data.message.find("line " + std::to_string(line) + ": ") == 0);
  CHECK(data.message.find(words) != std::string::npos);
}

Eigen::MatrixXd dense_of(const matrix_market_data& data) {
  auto assembled = qualify::to_dense(data);
  INFO(assembled.message);
  REQUIRE(assembled.ok);
  return assembled.matrix;
}

// The coordinate example printed in R. F. Boisvert, R. Pozo, K. Remington, "The Matrix Market
// Exchange Formats: Initial Design", NISTIR 5935, 1996 (the same file is on NIST's Matrix
// Market format page), its comment block shortened.
const char* const nist_coordinate_example =
    "%%MatrixMarket matrix coordinate real general\n"
    "%=================================================================================\n"
    "%\n"
    "% This ASCII file represents a sparse MxN matrix with L\n"
    "% nonzeros in the following Matrix Market format:\n"
    "%\n"
    "% Indices are 1-based, i.e. A(1,1) is the first element.\n"
    "%\n"
    "%=================================================================================\n"
    "  5  5  8\n"
    "    1     1   1.000e+00\n"
    "    2     2   1.050e+01\n"
    "    3     3   1.500e-02\n"
    "    1     4   6.000e+00\n"
    "    4     2   2.505e+02\n"
    "    4     4  -2.800e+02\n"
    "    4     5   3.332e+01\n"
    "    5     5   1.200e+01\n";

}  // namespace

TEST_CASE("the coordinate example of NISTIR 5935 reads as the matrix printed beside it") {
  matrix_market_data data = parse_matrix_market(nist_coordinate_example);
  INFO(data.message);
  REQUIRE(data.ok);
  CHECK(data.error == read_error::none);
  CHECK(data.format == matrix_market_format::coordinate);
  CHECK(data.field == matrix_market_field::real);
  CHECK(data.rows == 5);
  CHECK(data.cols == 5);
  CHECK(data.announced_entries == 8);
  REQUIRE(data.entries.size() == 8);
  // File order and 0-based indices: the fifth line of data is "4 2 2.505e+02".
  CHECK(data.entries[4].row == 3);
  CHECK(data.entries[4].col == 1);
  CHECK(data.entries[4].value == 250.5);

  // The 5 x 5 matrix the report prints above the file (NISTIR 5935, 1996).
  Eigen::MatrixXd expected(5, 5);
  // clang-format off
  expected << 1, 0, 0, 6, 0,
              0, 10.5, 0, 0, 0,
              0, 0, .015, 0, 0,
              0, 250.5, 0, -280, 33.32,
              0, 0, 0, 0, 12;
  // clang-format on
  CHECK(dense_of(data) == expected);

  auto sparse = qualify::to_sparse(data);
  REQUIRE(sparse.ok);
  CHECK(sparse.matrix.nonZeros() == 8);
  CHECK(Eigen::MatrixXd(sparse.matrix) == expected);
}

TEST_CASE("keywords are case-insensitive, comments and blank lines are skipped, CRLF is read") {
  // NISTIR 5935, 1996: the type words of the header are case-insensitive (from memory).
  matrix_market_data data = parse_matrix_market(
      "%%matrixmarket MATRIX Coordinate REAL General\r\n"
      "% a comment\r\n"
      "\r\n"
      "2 3 2\r\n"
      "1 3 +2.5\r\n"
      "\t2 1  -1e-1 \r\n");
  INFO(data.message);
  REQUIRE(data.ok);
  Eigen::MatrixXd expected(2, 3);
  // clang-format off
  expected << 0, 0, 2.5, -0.1, 0, 0;
  // clang-format on
  CHECK(dense_of(data) == expected);
}

TEST_CASE("array storage lists every entry in column-major order") {
  // NISTIR 5935, 1996, and NIST's Matrix Market format page (math.nist.gov/MatrixMarket/
  // formats.html): array files give all entries in column-oriented order.
  matrix_market_data data = parse_matrix_market(
      "%%MatrixMarket matrix array real general\n"
      "% a 2 x 3 matrix\n"
      "2 3\n1\n2\n3\n4\n5\n0\n");
  INFO(data.message);
  REQUIRE(data.ok);
  CHECK(data.format == matrix_market_format::array);
  CHECK(data.announced_entries == 6);
  CHECK(data.entries.size() == 6);  // zeros included
  Eigen::MatrixXd expected(2, 3);
  // clang-format off
  expected << 1, 3, 5,
              2, 4, 0;
  // clang-format on
  CHECK(dense_of(data) == expected);

  check_malformed("%%MatrixMarket matrix array real general\n2 2\n1\n2\n3\n", 5,
                  "after 3 of the 4 entries");
  check_malformed("%%MatrixMarket matrix array real general\n1 1\n1 2\n", 3, "unexpected '2'");
}

TEST_CASE("pattern entries read as ones and duplicates are kept, then summed on assembly") {
  // NISTIR 5935, 1996: pattern files give indices only (from memory). Summing duplicate
  // entries on assembly is common practice for coordinate files, no source.
  matrix_market_data data = parse_matrix_market(
      "%%MatrixMarket matrix coordinate pattern general\n"
      "3 2 4\n1 1\n3 2\n1 1\n2 2\n");
  INFO(data.message);
  REQUIRE(data.ok);
  CHECK(data.field == matrix_market_field::pattern);
  REQUIRE(data.entries.size() == 4);  // the duplicate is kept
  Eigen::MatrixXd expected(3, 2);
  // clang-format off
  expected << 2, 0,
              0, 1,
              0, 1;
  // clang-format on
  CHECK(dense_of(data) == expected);
  auto sparse = qualify::to_sparse(data);
  REQUIRE(sparse.ok);
  CHECK(sparse.matrix.nonZeros() == 3);
  CHECK(Eigen::MatrixXd(sparse.matrix) == expected);

  check_malformed("%%MatrixMarket matrix coordinate pattern general\n2 2 1\n1 1 5\n", 3,
                  "unexpected '5'");
}

TEST_CASE("integer field") {
  matrix_market_data data = parse_matrix_market(
      "%%MatrixMarket matrix coordinate integer general\n"
      "2 2 3\n1 1 7\n2 2 -3\n1 1 +2\n");
  INFO(data.message);
  REQUIRE(data.ok);
  CHECK(data.field == matrix_market_field::integer);
  Eigen::MatrixXd expected(2, 2);
  // clang-format off
  expected << 9, 0, 0, -3;
  // clang-format on
  CHECK(dense_of(data) == expected);

  matrix_market_data array =
      parse_matrix_market("%%MatrixMarket matrix array integer general\n1 2\n4\n-5\n");
  REQUIRE(array.ok);
  CHECK(dense_of(array) == Eigen::RowVector2d(4, -5));

  check_malformed("%%MatrixMarket matrix coordinate integer general\n2 2 1\n1 1 1.5\n", 3,
                  "is not an integer");
  check_malformed(
      "%%MatrixMarket matrix coordinate integer general\n2 2 1\n"
      "1 1 99999999999999999999\n",
      3, "overflows");
}

TEST_CASE("the writer's output reads back to the same matrix, bit for bit") {
  std::mt19937_64 rng(20261201);
  std::uniform_real_distribution<double> value(-1e3, 1e3);
  std::bernoulli_distribution keep(0.3);
  Eigen::MatrixXd dense = Eigen::MatrixXd::Zero(17, 9);
  for (Eigen::Index j = 0; j < dense.cols(); ++j)
    for (Eigen::Index i = 0; i < dense.rows(); ++i)
      if (keep(rng)) dense(i, j) = value(rng) * std::pow(10.0, static_cast<int>(i) - 8);
  dense(16, 8) = 4.9406564584124654e-324;  // the smallest subnormal
  dense(0, 0) = -1.7976931348623157e308;   // the most negative double

  SUBCASE("dense, in memory") {
    matrix_market_data data = parse_matrix_market(qualify::to_matrix_market(dense));
    INFO(data.message);
    REQUIRE(data.ok);
    CHECK(data.announced_entries == (dense.array() != 0).count());
    CHECK(dense_of(data) == dense);
  }
  SUBCASE("sparse, through a file") {
    qualify_test::temp_dir dir("qualify_mm_test_");
    Eigen::SparseMatrix<double> sparse = dense.sparseView();
    fs::path file = dir.path / "sparse.mtx";
    REQUIRE(qualify::write_matrix_market(file, sparse));
    matrix_market_data data = qualify::read_matrix_market(file);
    INFO(data.message);
    REQUIRE(data.ok);
    auto back = qualify::to_sparse(data);
    REQUIRE(back.ok);
    CHECK(back.matrix.nonZeros() == sparse.nonZeros());
    CHECK(Eigen::MatrixXd(back.matrix) == dense);
  }
  SUBCASE("row-major sparse and an empty matrix") {
    Eigen::SparseMatrix<double, Eigen::RowMajor> row_major = dense.sparseView();
    CHECK(dense_of(parse_matrix_market(qualify::to_matrix_market(row_major))) == dense);
    matrix_market_data empty =
        parse_matrix_market(qualify::to_matrix_market(Eigen::MatrixXd(3, 0)));
    REQUIRE(empty.ok);
    CHECK(empty.rows == 3);
    CHECK(empty.cols == 0);
  }
  SUBCASE("a write to a folder that does not exist reports failure") {
    qualify_test::temp_dir dir("qualify_mm_test_");
    CHECK_FALSE(qualify::write_matrix_market(dir.path / "missing" / "a.mtx", dense));
  }
}

TEST_CASE("a file of several MiB, read in chunks, gives what was written") {
  // Lines cross the 1 MiB chunk boundaries many times; each path must agree with the writer.
  std::mt19937_64 rng(7);
  std::uniform_int_distribution<int> row(0, 999), col(0, 499);
  std::normal_distribution<double> value;
  std::vector<Eigen::Triplet<double>> triplets;
  for (int k = 0; k < 200000; ++k) triplets.emplace_back(row(rng), col(rng), value(rng));
  Eigen::SparseMatrix<double> sparse(1000, 500);
  sparse.setFromTriplets(triplets.begin(), triplets.end());
  std::string text = qualify::to_matrix_market(sparse);
  REQUIRE(text.size() > (std::size_t{3} << 20));

  qualify_test::temp_dir dir("qualify_mm_test_");
  fs::path file = dir.write("big.mtx", text);
  std::istringstream stream(text);
  for (const matrix_market_data& data :
       {qualify::read_matrix_market(file), qualify::read_matrix_market(stream),
        parse_matrix_market(text)}) {
    INFO(data.message);
    REQUIRE(data.ok);
    auto back = qualify::to_sparse(data);
    REQUIRE(back.ok);
    CHECK(back.matrix.nonZeros() == sparse.nonZeros());
    CHECK((Eigen::MatrixXd(back.matrix) - Eigen::MatrixXd(sparse)).cwiseAbs().maxCoeff() == 0);
  }
  // The last line without its newline is still an entry.
  text.pop_back();
  CHECK(parse_matrix_market(text).ok);
}

TEST_CASE("bad input is reported with its line number") {
  const std::string head = "%%MatrixMarket matrix coordinate real general\n% comment\n";
  SUBCASE("truncated: fewer entries than announced") {
    check_malformed(head + "3 3 4\n1 1 1\n2 2 2\n", 5,
                    "after 2 of the 4 entries announced on line 3");
    check_malformed(head + "3 3 4\n1 1 1\n2 2 2", 5, "after 2 of the 4 entries");
    check_malformed(head + "3 3 4\n1 1 1\n2 2", 5, "has no value");
    check_malformed(head, 2, "ends before the size line");
  }
  SUBCASE("garbled numbers") {
    check_malformed(head + "3 3 2\n1 1 1\n2 2 1.2.3\n", 5,
                    "the value '1.2.3' of entry 2 (row 2, column 2) is not a number");
    check_malformed(head + "3 3 2\n1 1 1\n2 x 1\n", 5,
                    "the column index 'x' of entry 2 is not an integer");
    check_malformed(head + "3 3 2\n1.0 1 1\n", 4, "the row index '1.0' of entry 1");
    check_malformed(head + "3 3 2\n1 1 1e\n", 4, "is not a number");
    check_malformed(head + "3 3 2\n1 1 0x10\n", 4, "is not a number");
    check_malformed(head + "3 3 2\n1 1 +-1\n", 4, "is not a number");
    check_malformed(head + "3 3 2\n1 1\n", 4, "has no value");
    check_malformed(head + "3 3 2\n1 1 \x01\x02\n", 4, "the value '?\?' of entry 1");
    check_malformed(head + "3 3 2\n1 1 1 1\n", 4, "one entry per line");
    check_malformed(head + "3 three 2\n", 3, "the column count 'three' on the size line");
    check_malformed(head + "3 3\n", 3, "has no entry count");
    check_malformed(head + "3 3 2 1\n", 3, "unexpected '1' after the sizes");
  }
  SUBCASE("index zero or out of range") {
    check_malformed(head + "3 3 2\n1 1 1\n0 2 1\n", 5,
                    "the row index of entry 2 is 0; indices are 1-based");
    check_malformed(head + "3 3 2\n1 0 1\n", 4, "the column index of entry 1 is 0");
    check_malformed(head + "3 4 2\n4 1 1\n", 4, "the row index 4 of entry 1 is out of range 1..3");
    check_malformed(head + "3 4 2\n1 5 1\n", 4,
                    "the column index 5 of entry 1 is out of range 1..4");
    check_malformed(head + "3 4 2\n-1 1 1\n", 4, "out of range");
    check_malformed(head + "3 4 2\n1 99999999999999999999 1\n", 4, "overflows a 64-bit index");
  }
  SUBCASE("NaN and Inf values name the entry") {
    check_malformed(head + "3 3 2\n1 1 1\n2 3 nan\n", 5, "entry 2 (row 2, column 3) is NaN");
    check_malformed(head + "3 3 2\n3 1 -inf\n", 4, "entry 1 (row 3, column 1) is infinite");
    check_malformed(head + "3 3 2\n3 1 Infinity\n", 4, "is infinite");
    check_malformed(head + "3 3 2\n1 2 1e999\n", 4,
                    "the value '1e999' of entry 1 (row 1, column 2) overflows");
    check_malformed(head + "3 3 2\n1 2 -12345.6e305\n", 4, "overflows");
    // An underflow rounds to zero, as IEEE arithmetic does; it is not an error.
    matrix_market_data tiny = parse_matrix_market(head + "1 1 2\n1 1 1e-400\n1 1 -0.001e-999\n");
    INFO(tiny.message);
    REQUIRE(tiny.ok);
    CHECK(tiny.entries[0].value == 0.0);
    CHECK(std::signbit(tiny.entries[1].value));
  }
  SUBCASE("extra entries") {
    check_malformed(head + "3 3 1\n1 1 1\n2 2 2\n", 5, "extra entry: line 3 announced 1 entries");
    check_malformed(head + "3 3 0\n% nothing\n1 1 1\n", 5, "extra entry");
    // Trailing blank and comment lines are not entries.
    CHECK(parse_matrix_market(head + "3 3 1\n1 1 1\n\n% end\n  \n").ok);
  }
  SUBCASE("missing header") {
    check_malformed("", 1, "missing header");
    check_malformed(
        "3 3 1\n1 1 1\n", 1,
        "missing header: the first line must start with '%%MatrixMarket', found '3 3 1'");
    check_malformed("% comment\n%%MatrixMarket matrix coordinate real general\n", 1,
                    "missing header");
    check_malformed(" %%MatrixMarket matrix coordinate real general\n1 1 0\n", 1, "missing header");
    check_malformed("%%MatrixMarketmatrix coordinate real general\n1 1 0\n", 1, "missing header");
    check_malformed("%%MatrixMarket\n1 1 0\n", 1, "names no object");
    check_malformed("%%MatrixMarket matrix coordinate\n", 1, "names no field");
    check_malformed("%%MatrixMarket matrix coordinate real\n", 1, "names no symmetry");
    // A byte-order mark before the banner is tolerated.
    CHECK(parse_matrix_market("\xEF\xBB\xBF%%MatrixMarket matrix coordinate real general\n1 1 0\n")
              .ok);
  }
  SUBCASE("negative sizes") {
    check_malformed(head + "-3 3 1\n", 3, "the row count on the size line is negative (-3)");
    check_malformed(head + "3 -3 1\n", 3, "the column count on the size line is negative");
    check_malformed(head + "3 3 -1\n", 3, "the entry count on the size line is negative");
  }
  SUBCASE("sizes that overflow") {
    check_malformed(
        head + "99999999999999999999 3 1\n", 3,
        "the row count '99999999999999999999' on the size line overflows a 64-bit index");
    check_malformed("%%MatrixMarket matrix array real general\n4000000000 4000000000\n", 2,
                    "the array size 4000000000 x 4000000000 overflows");
    // An absurd announcement is refused by its data, not by allocating memory for it.
    check_malformed(head + "1000000000 1000000000 9000000000000000000\n1 1 1\n", 4,
                    "after 1 of the 9000000000000000000 entries");
  }
  SUBCASE("a line longer than max_line_length") {
    qualify::matrix_market_options options;
    options.max_line_length = 64;
    std::string text = head + "1 1 1\n1 1 1." + std::string(100, '5') + "\n";
    matrix_market_data data = parse_matrix_market(text, options);
    CHECK_FALSE(data.ok);
    CHECK(data.error == read_error::malformed);
    CHECK(data.line == std::optional<std::size_t>(4));
    CHECK(data.message.find("longer than 64 bytes") != std::string::npos);
    CHECK(parse_matrix_market(text).ok);  // the default allows it

    // Lines longer than the 1 MiB read chunk: refused at the default limit, read when allowed.
    std::string long_comment =
        head + "% " + std::string(std::size_t{3} << 20, 'x') + "\n1 1 1\n1 1 2\n";
    matrix_market_data refused = parse_matrix_market(long_comment);
    CHECK(refused.error == read_error::malformed);
    CHECK(refused.line == std::optional<std::size_t>(3));
    options.max_line_length = std::size_t{4} << 20;
    matrix_market_data allowed = parse_matrix_market(long_comment, options);
    INFO(allowed.message);
    REQUIRE(allowed.ok);
    CHECK(allowed.entries.at(0).value == 2);
  }
}

TEST_CASE("only real, integer and pattern fields with general symmetry are accepted") {
  // The words of NISTIR 5935, 1996: complex field; symmetric, skew-symmetric and hermitian
  // symmetry; the later 'vector' object. Each is refused by name.
  auto header = [](const std::string& words) {
    return "%%MatrixMarket " + words + "\n2 2 1\n1 1 1\n";
  };
  check_malformed(header("matrix coordinate complex general"), 1,
                  "the field 'complex' is not supported");
  check_malformed(header("matrix coordinate real symmetric"), 1,
                  "the symmetry 'symmetric' is not supported");
  check_malformed(header("matrix coordinate real skew-symmetric"), 1,
                  "the symmetry 'skew-symmetric' is not supported");
  check_malformed(header("matrix coordinate complex Hermitian"), 1, "the field 'complex'");
  check_malformed(header("matrix coordinate real hermitian"), 1,
                  "the symmetry 'hermitian' is not supported");
  check_malformed(header("vector coordinate real general"), 1,
                  "the object 'vector' is not supported");
  check_malformed(header("matrix coordinat real general"), 1, "unknown storage format 'coordinat'");
  check_malformed(header("matrix coordinate double general"), 1, "unknown field 'double'");
  check_malformed(header("matrix coordinate real upper"), 1, "unknown symmetry 'upper'");
  check_malformed(header("matrix coordinate real general extra"), 1, "unexpected word 'extra'");
  check_malformed(header("matrix array pattern general"), 1,
                  "'pattern' is defined for 'coordinate' storage only");
}

TEST_CASE("reading a path tells a missing file from a malformed one") {
  qualify_test::temp_dir dir("qualify_mm_test_");
  matrix_market_data missing = qualify::read_matrix_market(dir.path / "no_such.mtx");
  CHECK_FALSE(missing.ok);
  CHECK(missing.error == read_error::cannot_open);
  CHECK_FALSE(missing.line.has_value());
  CHECK(missing.message.find("cannot open") != std::string::npos);
  CHECK(missing.message.find("no_such.mtx") != std::string::npos);

  matrix_market_data folder = qualify::read_matrix_market(dir.path);
  CHECK(folder.error == read_error::cannot_open);
  CHECK(folder.message.find("directory") != std::string::npos);

  matrix_market_data bad = qualify::read_matrix_market(
      dir.write("bad.mtx", "%%MatrixMarket matrix coordinate real general\n2 2 1\n3 1 1\n"));
  CHECK(bad.error == read_error::malformed);
  CHECK(bad.line == std::optional<std::size_t>(3));

  CHECK(qualify::to_string(read_error::cannot_open) == "cannot_open");
  CHECK(qualify::to_string(read_error::malformed) == "malformed");
  CHECK(qualify::to_string(matrix_market_field::pattern) == "pattern");
  CHECK(qualify::to_string(matrix_market_format::array) == "array");
}

TEST_CASE("assembly refuses failed reads and dense sizes over the limit") {
  matrix_market_data untouched;
  CHECK_FALSE(untouched.ok);
  CHECK(untouched.message == "was not read");
  auto refused = qualify::to_dense(untouched);
  CHECK_FALSE(refused.ok);
  CHECK(refused.message.find("was not read") != std::string::npos);
  CHECK_FALSE(qualify::to_sparse(parse_matrix_market("garbage")).ok);

  matrix_market_data big = parse_matrix_market(
      "%%MatrixMarket matrix coordinate real general\n100000 100000 1\n5 7 2.5\n");
  REQUIRE(big.ok);
  auto dense = qualify::to_dense(big);  // 1e10 entries > the default limit of 2^26
  CHECK_FALSE(dense.ok);
  CHECK(dense.message.find("100000 x 100000") != std::string::npos);
  CHECK(dense.message.find("max_dense_entries") != std::string::npos);
  auto sparse = qualify::to_sparse(big);
  REQUIRE(sparse.ok);
  CHECK(sparse.matrix.coeff(4, 6) == 2.5);

  qualify::matrix_market_options options;
  options.max_dense_entries = 15;
  matrix_market_data four =
      parse_matrix_market("%%MatrixMarket matrix coordinate real general\n4 4 0\n");
  CHECK_FALSE(qualify::to_dense(four, options).ok);
  options.max_dense_entries = 16;  // rows * cols <= the limit is accepted
  CHECK(qualify::to_dense(four, options).ok);

  matrix_market_data wide =
      parse_matrix_market("%%MatrixMarket matrix coordinate real general\n1 4000000000 0\n");
  REQUIRE(wide.ok);
  auto too_wide = qualify::to_sparse(wide);
  CHECK_FALSE(too_wide.ok);
  CHECK(too_wide.message.find("sparse index limit") != std::string::npos);
}

TEST_CASE("cut or corrupted files give a located message, never a crash") {
  // Every prefix of the NIST example and random byte changes of it: each result is either a
  // matrix or a message that starts with a line number inside the text (run under the
  // sanitize preset, this is also the check for out-of-bounds reads).
  const std::string original = nist_coordinate_example;
  auto lines_in = [](const std::string& text) {
    return std::max<std::size_t>(1, std::count(text.begin(), text.end(), '\n') +
                                        (text.empty() || text.back() == '\n' ? 0 : 1));
  };
  auto check_located = [&](const std::string& text) {
    matrix_market_data data = parse_matrix_market(text);
    if (data.ok) return;
    INFO("input:\n" << text << "\nmessage: " << data.message);
    CHECK(data.error == read_error::malformed);
    REQUIRE(data.line.has_value());
    CHECK(*data.line >= 1);
    CHECK(*data.line <= lines_in(text));
    CHECK(data.message.find("line " + std::to_string(*data.line) + ": ") == 0);
  };
  int refused = 0;
  for (std::size_t cut = 0; cut < original.size(); ++cut) {
    check_located(original.substr(0, cut));
    refused += parse_matrix_market(original.substr(0, cut)).ok ? 0 : 1;
  }
  // A cut is accepted only at the very end, inside or after the last value "1.200e+01".
  CHECK(refused >= static_cast<int>(original.size()) - 10);

  std::mt19937 rng(11);
  std::uniform_int_distribution<std::size_t> where(0, original.size() - 1);
  std::uniform_int_distribution<int> byte(0, 255);
  for (int trial = 0; trial < 3000; ++trial) {
    std::string text = original;
    for (int k = 0; k < 1 + trial % 4; ++k) text[where(rng)] = static_cast<char>(byte(rng));
    check_located(text);
  }
}
