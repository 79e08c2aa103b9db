// fec_ldpc: parity-check matrices (alist, IEEE 802.11 prototypes), LDPC encoders, min-sum decoder.
#include <algorithm>
#include <array>
#include <bit>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <sstream>
#include <string>

#include "qamsight/fec.hpp"

namespace qamsight {

namespace {

// ---------------------------------------------------------------------------------------------
// IEEE 802.11n/ac LDPC prototype matrices, 24 block columns, "-" for a zero block.
// From memory (IEEE Std 802.11-2012 Annex F / 802.11n-2009 Annex R, prototype matrices); not
// transcribed from the document. Checked here by structure only: 24 columns, 24 (1 - R) rows,
// shifts below Z, the dual-diagonal parity part (column k_b with shifts x / 0 / x at the top,
// one middle and the bottom row, then a staircase of zero shifts) and full GF(2) rank of the
// expanded matrix. Base-matrix 4-cycles (s(a,c) - s(a,d) + s(b,d) - s(b,c) = 0 mod Z) occur in
// 648 r3/4 (rows 0/3 cols 8/18; rows 1/2 cols 0/20), 1296 r2/3 (rows 1/6 cols 1/2; rows 3/7
// cols 0/4) and 1944 r2/3 (rows 3/5 cols 0/2); the other nine tables have none.
// ---------------------------------------------------------------------------------------------
// n = 648, Z = 27, rate 1/2 (12 x 24).
constexpr const char* k648R12 =
    " 0  -  -  -  0  0  -  -  0  -  -  0  1  0  -  -  -  -  -  -  -  -  -  -\n"
    "22  0  -  - 17  -  0  0 12  -  -  -  -  0  0  -  -  -  -  -  -  -  -  -\n"
    " 6  -  0  - 10  -  -  - 24  -  0  -  -  -  0  0  -  -  -  -  -  -  -  -\n"
    " 2  -  -  0 20  -  -  - 25  0  -  -  -  -  -  0  0  -  -  -  -  -  -  -\n"
    "23  -  -  -  3  -  -  -  0  -  9 11  -  -  -  -  0  0  -  -  -  -  -  -\n"
    "24  - 23  1 17  -  3  - 10  -  -  -  -  -  -  -  -  0  0  -  -  -  -  -\n"
    "25  -  -  -  8  -  -  -  7 18  -  -  0  -  -  -  -  -  0  0  -  -  -  -\n"
    "13 24  -  -  0  -  8  -  6  -  -  -  -  -  -  -  -  -  -  0  0  -  -  -\n"
    " 7 20  - 16 22 10  -  - 23  -  -  -  -  -  -  -  -  -  -  -  0  0  -  -\n"
    "11  -  -  - 19  -  -  - 13  -  3 17  -  -  -  -  -  -  -  -  -  0  0  -\n"
    "25  -  8  - 23 18  - 14  9  -  -  -  -  -  -  -  -  -  -  -  -  -  0  0\n"
    " 3  -  -  - 16  -  -  2 25  5  -  -  1  -  -  -  -  -  -  -  -  -  -  0\n";
// n = 648, Z = 27, rate 2/3 (8 x 24).
constexpr const char* k648R23 =
    "25 26 14  - 20  -  2  -  4  -  -  8  - 16  - 18  1  0  -  -  -  -  -  -\n"
    "10  9 15 11  -  0  -  1  -  - 18  -  8  - 10  -  -  0  0  -  -  -  -  -\n"
    "16  2 20 26 21  -  6  -  1 26  -  7  -  -  -  -  -  -  0  0  -  -  -  -\n"
    "10 13  5  0  -  3  -  7  -  - 26  -  - 13  - 16  -  -  -  0  0  -  -  -\n"
    "23 14 24  - 12  - 19  - 17  -  -  - 20  - 21  -  0  -  -  -  0  0  -  -\n"
    " 6 22  9 20  - 25  - 17  -  8  - 14  - 18  -  -  -  -  -  -  -  0  0  -\n"
    "14 23 21 11 20  - 24  - 18  - 19  -  -  -  - 22  -  -  -  -  -  -  0  0\n"
    "17 11 11 20  - 21  - 26  -  3  -  - 18  - 26  -  1  -  -  -  -  -  -  0\n";
// n = 648, Z = 27, rate 3/4 (6 x 24).
constexpr const char* k648R34 =
    "16 17 22 24  9  3 14  -  4  2  7  - 26  -  2  - 21  -  1  0  -  -  -  -\n"
    "25 12 12  3  3 26  6 21  - 15 22  - 15  -  4  -  - 16  -  0  0  -  -  -\n"
    "25 18 26 16 22 23  9  -  0  -  4  -  4  -  8 23 11  -  -  -  0  0  -  -\n"
    " 9  7  0  1 17  -  -  7  3  -  3 23  - 16  -  - 21  -  0  -  -  0  0  -\n"
    "24  5 26  7  1  -  - 15 24 15  -  8  - 13  - 13  - 11  -  -  -  -  0  0\n"
    " 2  2 19 14 24  1 15 19  - 21  -  2  - 24  -  3  -  2  1  -  -  -  -  0\n";
// n = 648, Z = 27, rate 5/6 (4 x 24).
constexpr const char* k648R56 =
    "17 13  8 21  9  3 18 12 10  0  4 15 19  2  5 10 26 19 13 13  1  0  -  -\n"
    " 3 12 11 14 11 25  5 18  0  9  2 26 26 10 24  7 14 20  4  2  -  0  0  -\n"
    "22 16  4  3 10 21 12  5 21 14 19  5  -  8  5 18 11  5  5 15  0  -  0  0\n"
    " 7  7 14 14  4 16 16 24 24 10  1  7 15  6 10 26  8 18 21 14  1  -  -  0\n";
// n = 1296, Z = 54, rate 1/2 (12 x 24).
constexpr const char* k1296R12 =
    "40  -  -  - 22  - 49 23 43  -  -  -  1  0  -  -  -  -  -  -  -  -  -  -\n"
    "50  1  -  - 48 35  -  - 13  - 30  -  -  0  0  -  -  -  -  -  -  -  -  -\n"
    "39 50  -  -  4  -  2  -  -  -  - 49  -  -  0  0  -  -  -  -  -  -  -  -\n"
    "33  -  - 38 37  -  -  4  1  -  -  -  -  -  -  0  0  -  -  -  -  -  -  -\n"
    "45  -  -  -  0 22  -  - 20 42  -  -  -  -  -  -  0  0  -  -  -  -  -  -\n"
    "51  -  - 48 35  -  -  - 44  - 18  -  -  -  -  -  -  0  0  -  -  -  -  -\n"
    "47 11  -  -  - 17  -  - 51  -  -  -  0  -  -  -  -  -  0  0  -  -  -  -\n"
    " 5  - 25  -  6  - 45  - 13 40  -  -  -  -  -  -  -  -  -  0  0  -  -  -\n"
    "33  -  - 34 24  -  -  - 23  -  - 46  -  -  -  -  -  -  -  -  0  0  -  -\n"
    " 1  - 27  -  1  -  -  - 38  - 44  -  -  -  -  -  -  -  -  -  -  0  0  -\n"
    " - 18  -  - 23  -  -  8  0 35  -  -  -  -  -  -  -  -  -  -  -  -  0  0\n"
    "49  - 17  - 30  -  -  - 34  -  - 19  1  -  -  -  -  -  -  -  -  -  -  0\n";
// n = 1296, Z = 54, rate 2/3 (8 x 24).
constexpr const char* k1296R23 =
    "39 31 22 43  - 40  4  - 11  -  - 50  -  -  -  6  1  0  -  -  -  -  -  -\n"
    "25 52 41  2  6  - 14  - 34  -  -  - 24  - 37  -  -  0  0  -  -  -  -  -\n"
    "43 31 29  0 21  - 28  -  -  2  -  -  7  - 17  -  -  -  0  0  -  -  -  -\n"
    "20 33 48  -  4 13  - 26  -  - 22  -  - 46 42  -  -  -  -  0  0  -  -  -\n"
    "45  7 18 51 12 25  -  -  - 50  -  -  5  -  -  -  0  -  -  -  0  0  -  -\n"
    "35 40 32 16  5  -  - 18  -  - 43 51  - 32  -  -  -  -  -  -  -  0  0  -\n"
    " 9 24 13 22 28  -  - 37  -  - 25  -  - 52  - 13  -  -  -  -  -  -  0  0\n"
    "32 22  4 21 16  -  -  - 27 28  - 38  -  -  -  8  1  -  -  -  -  -  -  0\n";
// n = 1296, Z = 54, rate 3/4 (6 x 24).
constexpr const char* k1296R34 =
    "39 40 51 41  3 29  8 36  - 14  -  6  - 33  - 11  -  4  1  0  -  -  -  -\n"
    "48 21 47  9 48 35 51  - 38  - 28  - 34  - 50  - 50  -  -  0  0  -  -  -\n"
    "30 39 28 42 50 39  5 17  -  6  - 18  - 20  - 15  - 40  -  -  0  0  -  -\n"
    "29  0  1 43 36 30 47  - 49  - 47  -  3  - 35  - 34  -  0  -  -  0  0  -\n"
    " 1 32 11 23 10 44 12  7  - 48  -  4  -  9  - 17  - 16  -  -  -  -  0  0\n"
    "13  7 15 47 23 16 47  - 43  - 29  - 52  -  2  - 53  -  1  -  -  -  -  0\n";
// n = 1296, Z = 54, rate 5/6 (4 x 24).
constexpr const char* k1296R56 =
    "48 29 37 52  2 16  6 14 53 31 34  5 18 42 53 31 45  - 46 52  1  0  -  -\n"
    "17  4 30  7 43 11 24  6 14 21  6 39 17 40 47  7 15 41 19  -  -  0  0  -\n"
    " 7  2 51 31 46 23 16 11 53 40 10  7 46 53 33 35  - 25 35 38  0  -  0  0\n"
    "19 48 41  1 10  7 36 47  5 29 52 52 31 10 26  6  3  2  - 51  1  -  -  0\n";
// n = 1944, Z = 81, rate 1/2 (12 x 24).
constexpr const char* k1944R12 =
    "57  -  -  - 50  - 11  - 50  - 79  -  1  0  -  -  -  -  -  -  -  -  -  -\n"
    " 3  - 28  -  0  -  -  - 55  7  -  -  -  0  0  -  -  -  -  -  -  -  -  -\n"
    "30  -  -  - 24 37  -  - 56 14  -  -  -  -  0  0  -  -  -  -  -  -  -  -\n"
    "62 53  -  - 53  -  -  3 35  -  -  -  -  -  -  0  0  -  -  -  -  -  -  -\n"
    "40  -  - 20 66  -  - 22 28  -  -  -  -  -  -  -  0  0  -  -  -  -  -  -\n"
    " 0  -  -  -  8  - 42  - 50  -  -  8  -  -  -  -  -  0  0  -  -  -  -  -\n"
    "69 79 79  -  -  - 56  - 52  -  -  -  0  -  -  -  -  -  0  0  -  -  -  -\n"
    "65  -  -  - 38 57  -  - 72  - 27  -  -  -  -  -  -  -  -  0  0  -  -  -\n"
    "64  -  -  - 14 52  -  - 30  -  - 32  -  -  -  -  -  -  -  -  0  0  -  -\n"
    " - 45  - 70  0  -  -  - 77  9  -  -  -  -  -  -  -  -  -  -  -  0  0  -\n"
    " 2 56  - 57 35  -  -  -  -  - 12  -  -  -  -  -  -  -  -  -  -  -  0  0\n"
    "24  - 61  - 60  -  - 27 51  -  - 16  1  -  -  -  -  -  -  -  -  -  -  0\n";
// n = 1944, Z = 81, rate 2/3 (8 x 24).
constexpr const char* k1944R23 =
    "61 75  4 63 56  -  -  -  -  -  -  8  -  2 17 25  1  0  -  -  -  -  -  -\n"
    "56 74 77 20  -  -  - 64 24  4 67  -  7  -  -  -  -  0  0  -  -  -  -  -\n"
    "28 21 68 10  7 14 65  -  -  - 23  -  -  - 75  -  -  -  0  0  -  -  -  -\n"
    "48 38 43 78 76  -  -  -  -  5 36  - 15 72  -  -  -  -  -  0  0  -  -  -\n"
    "40  2 53 25  - 52 62  - 20  -  - 44  -  -  -  -  0  -  -  -  0  0  -  -\n"
    "69 23 64 10 22  - 21  -  -  -  -  - 68 23 29  -  -  -  -  -  -  0  0  -\n"
    "12  0 68 20 55 61  - 40  -  -  - 52  -  -  - 44  -  -  -  -  -  -  0  0\n"
    "58  8 34 64 78  -  - 11 78 24  -  -  -  -  - 58  1  -  -  -  -  -  -  0\n";
// n = 1944, Z = 81, rate 3/4 (6 x 24).
constexpr const char* k1944R34 =
    "48 29 28 39  9 61  -  -  - 63 45 80  -  -  - 37 32 22  1  0  -  -  -  -\n"
    " 4 49 42 48 11 30  -  -  - 49 17 41 37 15  - 54  -  -  -  0  0  -  -  -\n"
    "35 76 78 51 37 35 21  - 17 64  -  -  - 59  7  -  - 32  -  -  0  0  -  -\n"
    " 9 65 44  9 54 56 73 34 42  -  -  - 35  -  -  - 46 39  0  -  -  0  0  -\n"
    " 3 62  7 80 68 26  - 80 55  - 36  - 26  -  9  - 72  -  -  -  -  -  0  0\n"
    "26 75 33 21 69 59  3 38  -  -  - 35  - 62 36 26  -  -  1  -  -  -  -  0\n";
// n = 1944, Z = 81, rate 5/6 (4 x 24).
constexpr const char* k1944R56 =
    "13 48 80 66  4 74  7 30 76 52 37 60  - 49 73 31 74 73 23  -  1  0  -  -\n"
    "69 63 74 56 64 77 57 65  6 16 51  - 64  - 68  9 48 62 54 27  -  0  0  -\n"
    "51 15  0 80 24 25 42 54 44 71 71  9 67 35  - 58  - 29  - 53  0  -  0  0\n"
    "16 29 36 41 44 56 59 37 50 24  - 65  4 65 52  -  4  - 73 52  1  -  -  0\n";

struct PrototypeEntry {
  std::size_t n;
  int num, den;
  const char* table;
};
// clang-format off
constexpr std::array<PrototypeEntry, 12> kPrototypes{{
    {648, 1, 2, k648R12},   {648, 2, 3, k648R23},   {648, 3, 4, k648R34},   {648, 5, 6, k648R56},
    {1296, 1, 2, k1296R12}, {1296, 2, 3, k1296R23}, {1296, 3, 4, k1296R34}, {1296, 5, 6, k1296R56},
    {1944, 1, 2, k1944R12}, {1944, 2, 3, k1944R23}, {1944, 3, 4, k1944R34}, {1944, 5, 6, k1944R56},
}};
// clang-format on

// Check-to-bit message and posterior clamp: keeps sums finite for saturated inputs.
constexpr float kLlrClamp = 1.0e6f;

// Dense GF(2) matrix, rows packed into 64-bit words.
struct DenseGf2 {
  std::size_t rows = 0, cols = 0, words = 0;
  std::vector<std::uint64_t> bits;
  explicit DenseGf2(const ParityCheckMatrix& h)
      : rows(h.rows()), cols(h.cols()), words((h.cols() + 63) / 64), bits(rows * words, 0) {
    for (std::size_t r = 0; r < rows; ++r)
      for (std::uint32_t c : h.row(r)) bits[r * words + c / 64] |= std::uint64_t{1} << (c % 64);
  }
  bool get(std::size_t r, std::size_t c) const { return (bits[r * words + c / 64] >> (c % 64)) & 1u; }
  // Reduced row echelon form with pivots sought from the last column backwards. Returns the
  // pivot column of each of the first rank rows.
  std::vector<std::uint32_t> reduce_from_last_column() {
    std::vector<std::uint32_t> pivots;
    std::size_t next = 0;
    for (std::size_t c = cols; c-- > 0 && next < rows;) {
      std::size_t r = next;
      while (r < rows && !get(r, c)) ++r;
      if (r == rows) continue;
      if (r != next)
        std::swap_ranges(bits.begin() + r * words, bits.begin() + (r + 1) * words,
                         bits.begin() + next * words);
      const std::uint64_t* p = bits.data() + next * words;
      for (std::size_t r2 = 0; r2 < rows; ++r2) {
        if (r2 == next || !get(r2, c)) continue;
        std::uint64_t* q = bits.data() + r2 * words;
        for (std::size_t w = 0; w < words; ++w) q[w] ^= p[w];
      }
      pivots.push_back(static_cast<std::uint32_t>(c));
      ++next;
    }
    return pivots;
  }
};

std::string alist_error(const std::string& source, std::size_t line, const std::string& what) {
  return "alist '" + source + "' line " + std::to_string(line) + ": " + what;
}

struct AlistLine {
  std::size_t number;
  std::vector<std::uint64_t> values;
};

std::vector<AlistLine> alist_lines(std::string_view text, const std::string& source) {
  std::vector<AlistLine> lines;
  std::size_t number = 0, pos = 0;
  while (pos < text.size()) {
    std::size_t end = text.find('\n', pos);
    if (end == std::string_view::npos) end = text.size();
    std::string_view line = text.substr(pos, end - pos);
    pos = end + 1;
    ++number;
    AlistLine parsed{number, {}};
    std::size_t i = 0;
    while (i < line.size()) {
      while (i < line.size() && (line[i] == ' ' || line[i] == '\t' || line[i] == '\r')) ++i;
      if (i == line.size()) break;
      std::size_t j = i;
      while (j < line.size() && line[j] != ' ' && line[j] != '\t' && line[j] != '\r') ++j;
      const std::string_view token = line.substr(i, j - i);
      std::uint64_t value = 0;
      const auto [ptr, ec] = std::from_chars(token.data(), token.data() + token.size(), value);
      if (ec != std::errc() || ptr != token.data() + token.size() || value > 0xFFFFFFFFull)
        throw InputError(
            alist_error(source, number, "'" + std::string(token) + "' is not a non-negative integer"));
      parsed.values.push_back(value);
      i = j;
    }
    if (!parsed.values.empty()) lines.push_back(std::move(parsed));
  }
  return lines;
}

}  // namespace

// ---------------------------------------------------------------------------------------------
// ParityCheckMatrix

ParityCheckMatrix::ParityCheckMatrix(std::size_t rows, std::size_t cols,
                                     std::vector<std::vector<std::uint32_t>> row_columns) {
  if (rows == 0 || rows > 0x7FFFFFFFu)
    throw ConfigError("parity-check rows", std::to_string(rows), "1 to 2^31 - 1");
  if (cols == 0 || cols > 0x7FFFFFFFu)
    throw ConfigError("parity-check columns", std::to_string(cols), "1 to 2^31 - 1");
  if (row_columns.size() != rows)
    throw ConfigError("parity-check row lists", std::to_string(row_columns.size()),
                      "one list per row (" + std::to_string(rows) + ")");
  row_ptr_.assign(1, 0);
  std::vector<std::uint32_t> col_count(cols, 0);
  for (std::size_t r = 0; r < rows; ++r) {
    auto& list = row_columns[r];
    std::sort(list.begin(), list.end());
    for (std::size_t i = 0; i < list.size(); ++i) {
      if (list[i] >= cols)
        throw ConfigError("parity-check column index in row " + std::to_string(r), std::to_string(list[i]),
                          "0 to " + std::to_string(cols - 1));
      if (i > 0 && list[i] == list[i - 1])
        throw ConfigError("parity-check column index in row " + std::to_string(r), std::to_string(list[i]),
                          "each column at most once per row");
      ++col_count[list[i]];
    }
    row_idx_.insert(row_idx_.end(), list.begin(), list.end());
    row_ptr_.push_back(static_cast<std::uint32_t>(row_idx_.size()));
  }
  col_ptr_.assign(cols + 1, 0);
  for (std::size_t c = 0; c < cols; ++c) col_ptr_[c + 1] = col_ptr_[c] + col_count[c];
  col_idx_.resize(row_idx_.size());
  std::vector<std::uint32_t> fill(col_ptr_.begin(), col_ptr_.end() - 1);
  for (std::size_t r = 0; r < rows; ++r)
    for (std::uint32_t c : row(r)) col_idx_[fill[c]++] = static_cast<std::uint32_t>(r);
}

std::size_t ParityCheckMatrix::max_row_weight() const noexcept {
  std::size_t w = 0;
  for (std::size_t r = 0; r < rows(); ++r) w = std::max<std::size_t>(w, row_ptr_[r + 1] - row_ptr_[r]);
  return w;
}

std::size_t ParityCheckMatrix::max_column_weight() const noexcept {
  std::size_t w = 0;
  for (std::size_t c = 0; c < cols(); ++c) w = std::max<std::size_t>(w, col_ptr_[c + 1] - col_ptr_[c]);
  return w;
}

std::size_t ParityCheckMatrix::syndrome_weight(std::span<const std::uint8_t> word) const {
  if (word.size() != cols())
    throw ConfigError("word length", std::to_string(word.size()), std::to_string(cols()));
  std::size_t unsatisfied = 0;
  for (std::size_t r = 0; r < rows(); ++r) {
    unsigned parity = 0;
    for (std::uint32_t c : row(r)) parity ^= word[c] & 1u;
    unsatisfied += parity;
  }
  return unsatisfied;
}

std::size_t ParityCheckMatrix::rank() const {
  DenseGf2 dense(*this);
  return dense.reduce_from_last_column().size();
}

ParityCheckMatrix ParityCheckMatrix::parse_alist(std::string_view text, const std::string& source) {
  const std::vector<AlistLine> lines = alist_lines(text, source);
  std::size_t at = 0;
  auto next_line = [&](const char* what) -> const AlistLine& {
    if (at == lines.size()) {
      const std::size_t last = lines.empty() ? 0 : lines.back().number;
      throw InputError(alist_error(source, last + 1, std::string("missing ") + what));
    }
    return lines[at++];
  };
  auto expect_count = [&](const AlistLine& line, std::size_t count, const char* what) {
    if (line.values.size() != count)
      throw InputError(alist_error(source, line.number,
                                   "expected " + std::to_string(count) + " " + what + ", found " +
                                       std::to_string(line.values.size())));
  };

  const AlistLine& dims = next_line("the dimensions 'n m'");
  expect_count(dims, 2, "numbers (n m)");
  const std::uint64_t n = dims.values[0], m = dims.values[1];
  if (n == 0 || m == 0 || n > 10000000 || m > 10000000)
    throw InputError(alist_error(
        source, dims.number,
        "dimensions must be 1 to 10^7 (n = " + std::to_string(n) + ", m = " + std::to_string(m) + ")"));
  const AlistLine& maxima = next_line("the maximum weights");
  expect_count(maxima, 2, "numbers (max column weight, max row weight)");
  const std::uint64_t max_col = maxima.values[0], max_row = maxima.values[1];
  if (max_col > m || max_row > n)
    throw InputError(alist_error(source, maxima.number, "maximum weights exceed the dimensions"));
  const AlistLine& col_weights = next_line("the column weights");
  expect_count(col_weights, n, "column weights");
  const AlistLine& row_weights = next_line("the row weights");
  expect_count(row_weights, m, "row weights");

  auto check_weights = [&](const AlistLine& line, std::uint64_t declared_max, const char* kind) {
    std::uint64_t top = 0, total = 0;
    for (std::size_t i = 0; i < line.values.size(); ++i) {
      if (line.values[i] == 0)
        throw InputError(alist_error(source, line.number,
                                     std::string(kind) + " " + std::to_string(i + 1) +
                                         " has weight 0 (every " + kind + " needs an entry)"));
      if (line.values[i] > declared_max)
        throw InputError(alist_error(source, line.number,
                                     std::string(kind) + " " + std::to_string(i + 1) + " weight " +
                                         std::to_string(line.values[i]) + " exceeds the declared maximum " +
                                         std::to_string(declared_max)));
      top = std::max(top, line.values[i]);
      total += line.values[i];
    }
    if (top != declared_max)
      throw InputError(alist_error(source, line.number,
                                   std::string("largest ") + kind + " weight is " + std::to_string(top) +
                                       " but line 2 declares " + std::to_string(declared_max)));
    return total;
  };
  const std::uint64_t col_total = check_weights(col_weights, max_col, "column");
  const std::uint64_t row_total = check_weights(row_weights, max_row, "row");
  if (col_total != row_total)
    throw InputError(alist_error(source, row_weights.number,
                                 "row weights sum to " + std::to_string(row_total) +
                                     " but column weights to " + std::to_string(col_total)));

  // One index list: `weight` indices in 1..limit, ascending order not required, no repeats,
  // then only zeros, at most `max_weight` entries in all.
  auto read_list = [&](const AlistLine& line, std::uint64_t weight, std::uint64_t max_weight,
                       std::uint64_t limit, const std::string& what) {
    if (line.values.size() < weight || line.values.size() > max_weight)
      throw InputError(
          alist_error(source, line.number,
                      what + " has " + std::to_string(line.values.size()) + " entries; expected " +
                          std::to_string(weight) +
                          (weight < max_weight ? " to " + std::to_string(max_weight) + " (zero padded)"
                                               : std::string())));
    std::vector<std::uint32_t> list;
    for (std::size_t i = 0; i < line.values.size(); ++i) {
      const std::uint64_t v = line.values[i];
      if (i >= weight) {
        if (v != 0)
          throw InputError(alist_error(source, line.number,
                                       what + ": entry " + std::to_string(i + 1) +
                                           " should be padding 0 after " + std::to_string(weight) +
                                           " indices, found " + std::to_string(v)));
        continue;
      }
      if (v == 0 || v > limit)
        throw InputError(
            alist_error(source, line.number,
                        what + ": index " + std::to_string(v) + " out of range 1.." + std::to_string(limit)));
      list.push_back(static_cast<std::uint32_t>(v - 1));
    }
    std::vector<std::uint32_t> sorted = list;
    std::sort(sorted.begin(), sorted.end());
    if (std::adjacent_find(sorted.begin(), sorted.end()) != sorted.end())
      throw InputError(alist_error(source, line.number, what + " repeats an index"));
    return sorted;
  };

  std::vector<std::vector<std::uint32_t>> from_columns(m);
  std::vector<std::size_t> column_line(n);
  for (std::size_t c = 0; c < n; ++c) {
    const AlistLine& line = next_line("column index lists");
    column_line[c] = line.number;
    for (std::uint32_t r :
         read_list(line, col_weights.values[c], max_col, m, "column " + std::to_string(c + 1)))
      from_columns[r].push_back(static_cast<std::uint32_t>(c));
  }
  std::vector<std::vector<std::uint32_t>> row_columns(m);
  for (std::size_t r = 0; r < m; ++r) {
    const AlistLine& line = next_line("row index lists");
    row_columns[r] = read_list(line, row_weights.values[r], max_row, n, "row " + std::to_string(r + 1));
    if (row_columns[r] != from_columns[r]) {
      // Name the first column on which the two descriptions disagree.
      std::vector<std::uint32_t> diff;
      std::set_symmetric_difference(row_columns[r].begin(), row_columns[r].end(), from_columns[r].begin(),
                                    from_columns[r].end(), std::back_inserter(diff));
      throw InputError(
          alist_error(source, line.number,
                      "row " + std::to_string(r + 1) + " and column " + std::to_string(diff.front() + 1) +
                          " (line " + std::to_string(column_line[diff.front()]) + ") disagree about entry (" +
                          std::to_string(r + 1) + ", " + std::to_string(diff.front() + 1) + ")"));
    }
  }
  if (at != lines.size())
    throw InputError(alist_error(source, lines[at].number, "unexpected data after the row lists"));
  return ParityCheckMatrix(m, n, std::move(row_columns));
}

ParityCheckMatrix ParityCheckMatrix::read_alist(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError("alist '" + path + "': cannot open the file");
  std::ostringstream text;
  text << in.rdbuf();
  if (in.bad()) throw InputError("alist '" + path + "': read error");
  return parse_alist(text.str(), path);
}

std::string ParityCheckMatrix::to_alist() const {
  std::ostringstream out;
  const std::size_t max_col = max_column_weight(), max_row = max_row_weight();
  out << cols() << ' ' << rows() << '\n' << max_col << ' ' << max_row << '\n';
  for (std::size_t c = 0; c < cols(); ++c) out << (c ? " " : "") << column(c).size();
  out << '\n';
  for (std::size_t r = 0; r < rows(); ++r) out << (r ? " " : "") << row(r).size();
  out << '\n';
  auto write_list = [&](std::span<const std::uint32_t> list, std::size_t width) {
    for (std::size_t i = 0; i < width; ++i) {
      if (i) out << ' ';
      out << (i < list.size() ? list[i] + 1 : 0);
    }
    out << '\n';
  };
  for (std::size_t c = 0; c < cols(); ++c) write_list(column(c), max_col);
  for (std::size_t r = 0; r < rows(); ++r) write_list(row(r), max_row);
  return out.str();
}

void ParityCheckMatrix::write_alist(const std::string& path) const {
  const std::string text = to_alist();
  const std::string temporary = path + ".tmp";
  {
    std::ofstream out(temporary, std::ios::binary | std::ios::trunc);
    if (!out) throw InputError("alist '" + path + "': cannot create '" + temporary + "'");
    out.write(text.data(), static_cast<std::streamsize>(text.size()));
    out.flush();
    if (!out) throw InputError("alist '" + path + "': write error");
  }
  if (std::rename(temporary.c_str(), path.c_str()) != 0) {
    std::remove(temporary.c_str());
    throw InputError("alist '" + path + "': cannot rename the temporary file into place");
  }
}

// ---------------------------------------------------------------------------------------------
// Prototypes

ParityCheckMatrix LdpcPrototype::expand() const {
  if (lifting == 0 || block_rows == 0 || block_cols == 0 ||
      shifts.size() != static_cast<std::size_t>(block_rows) * block_cols)
    throw ConfigError(
        "ldpc prototype",
        std::to_string(block_rows) + "x" + std::to_string(block_cols) + " Z=" + std::to_string(lifting),
        "block_rows * block_cols shifts and Z >= 1");
  const std::size_t z = lifting;
  std::vector<std::vector<std::uint32_t>> row_columns(block_rows * z);
  for (unsigned i = 0; i < block_rows; ++i)
    for (unsigned j = 0; j < block_cols; ++j) {
      const int s = shift(i, j);
      if (s < 0) continue;
      if (static_cast<unsigned>(s) >= lifting)
        throw ConfigError("ldpc prototype shift", std::to_string(s),
                          "-1 or 0 to " + std::to_string(lifting - 1));
      for (std::size_t r = 0; r < z; ++r)
        row_columns[i * z + r].push_back(static_cast<std::uint32_t>(j * z + (r + s) % z));
    }
  return ParityCheckMatrix(block_rows * z, block_cols * z, std::move(row_columns));
}

LdpcPrototype ieee80211_ldpc_prototype(std::size_t codeword_bits, int rate_num, int rate_den) {
  for (const PrototypeEntry& e : kPrototypes) {
    if (e.n != codeword_bits || e.num != rate_num || e.den != rate_den) continue;
    LdpcPrototype p;
    p.codeword_bits = e.n;
    p.lifting = static_cast<unsigned>(e.n / 24);
    p.block_cols = 24;
    p.rate_text = std::to_string(e.num) + "/" + std::to_string(e.den);
    std::istringstream in(e.table);
    std::string token;
    while (in >> token) p.shifts.push_back(token == "-" ? -1 : std::stoi(token));
    p.block_rows = static_cast<unsigned>(p.shifts.size() / 24);
    return p;
  }
  throw ConfigError("802.11 LDPC code",
                    "n=" + std::to_string(codeword_bits) + " rate " + std::to_string(rate_num) + "/" +
                        std::to_string(rate_den),
                    "n 648, 1296, 1944 with rate 1/2, 2/3, 3/4, 5/6");
}

// ---------------------------------------------------------------------------------------------
// LdpcCode

void LdpcCode::check_config() const {
  require_range("ldpc max iterations", config_.max_iterations, 1, 10000);
  require_range_open_low("ldpc normalisation", config_.normalisation, 0.0, 1.0);
  require_range("ldpc offset", config_.offset, 0.0, 10.0);
  if (config_.rule != MinSumRule::normalised && config_.rule != MinSumRule::offset)
    throw ConfigError("ldpc min-sum rule", std::to_string(static_cast<int>(config_.rule)),
                      "normalised, offset");
}

namespace {
std::string ldpc_description(const ParityCheckMatrix& h, std::size_t k, const char* encoder,
                             const LdpcDecoderConfig& c) {
  std::ostringstream out;
  out << "LDPC n=" << h.cols() << " k=" << k << " (" << h.rows() << " checks, " << h.edges() << " edges), "
      << encoder << " encoder, layered " << (c.rule == MinSumRule::normalised ? "normalised" : "offset")
      << " min-sum, up to " << c.max_iterations << " iterations";
  return out.str();
}
}  // namespace

LdpcCode::LdpcCode(std::string name, ParityCheckMatrix h, LdpcDecoderConfig decoder)
    : name_(std::move(name)), config_(decoder), kind_(LdpcEncoderKind::dense) {
  check_config();
  const std::size_t n = h.cols();
  if (n > kMaxDenseCodewordBits)
    throw ConfigError("ldpc codeword length (dense encoder)", std::to_string(n),
                      "1 to " + std::to_string(kMaxDenseCodewordBits));
  DenseGf2 dense(h);
  parity_positions_ = dense.reduce_from_last_column();
  const std::size_t rank = parity_positions_.size();
  if (rank == n)
    throw ConfigError("ldpc parity-check rank", std::to_string(rank),
                      "below the codeword length " + std::to_string(n) + " (k >= 1)");
  std::vector<std::int32_t> info_index(n, -1);
  for (std::uint32_t p : parity_positions_) info_index[p] = -2;
  auto positions = std::make_shared<std::vector<std::uint32_t>>();
  for (std::size_t c = 0; c < n; ++c)
    if (info_index[c] == -1) {
      info_index[c] = static_cast<std::int32_t>(positions->size());
      positions->push_back(static_cast<std::uint32_t>(c));
    }
  const std::size_t k = positions->size();
  dense_words_ = (k + 63) / 64;
  dense_rows_.assign(rank * dense_words_, 0);
  for (std::size_t i = 0; i < rank; ++i)
    for (std::size_t c = 0; c < n; ++c)
      if (info_index[c] >= 0 && dense.get(i, c)) {
        const auto j = static_cast<std::size_t>(info_index[c]);
        dense_rows_[i * dense_words_ + j / 64] |= std::uint64_t{1} << (j % 64);
      }
  description_ = ldpc_description(h, k, "dense systematic", config_);
  h_ = std::make_shared<const ParityCheckMatrix>(std::move(h));
  info_positions_ = std::move(positions);
}

LdpcCode::LdpcCode(std::string name, const LdpcPrototype& prototype, LdpcDecoderConfig decoder)
    : name_(std::move(name)), config_(decoder), kind_(LdpcEncoderKind::dual_diagonal), prototype_(prototype) {
  check_config();
  const unsigned mb = prototype.block_rows, nb = prototype.block_cols, z = prototype.lifting;
  const std::string what = std::to_string(mb) + "x" + std::to_string(nb) + " Z=" + std::to_string(z);
  if (z < 1 || z > kMaxLifting)
    throw ConfigError("ldpc prototype lifting", std::to_string(z), "1 to " + std::to_string(kMaxLifting));
  if (mb < 3 || nb <= mb)
    throw ConfigError("ldpc prototype size", what, "at least 3 block rows and more columns than rows");
  ParityCheckMatrix h = prototype.expand();  // also checks the shifts
  const unsigned kb = nb - mb;
  const std::string allowed =
      "a dual-diagonal parity part: block column k_b with shifts x, y, x in the first, one "
      "middle and the last row, then zero shifts on the staircase (rows j, j+1 of column k_b+1+j)";
  auto fail = [&]() { throw ConfigError("ldpc prototype structure", what, allowed); };
  const int x = prototype.shift(0, kb);
  if (x < 0 || prototype.shift(mb - 1, kb) != x) fail();
  int mid = -1;
  for (unsigned i = 1; i + 1 < mb; ++i)
    if (prototype.shift(i, kb) >= 0) {
      if (mid >= 0) fail();
      mid = static_cast<int>(i);
    }
  if (mid < 0) fail();
  for (unsigned j = 0; j + 1 < mb; ++j)
    for (unsigned i = 0; i < mb; ++i) {
      const int s = prototype.shift(i, kb + 1 + j);
      if ((i == j || i == j + 1) ? s != 0 : s >= 0) fail();
    }
  hb_top_shift_ = static_cast<unsigned>(x);
  hb_mid_row_ = static_cast<unsigned>(mid);
  hb_mid_shift_ = static_cast<unsigned>(prototype.shift(hb_mid_row_, kb));
  auto positions = std::make_shared<std::vector<std::uint32_t>>(kb * z);
  for (std::size_t c = 0; c < positions->size(); ++c) (*positions)[c] = static_cast<std::uint32_t>(c);
  description_ = ldpc_description(h, positions->size(), "dual-diagonal", config_);
  h_ = std::make_shared<const ParityCheckMatrix>(std::move(h));
  info_positions_ = std::move(positions);
}

void LdpcCode::encode(std::span<const std::uint8_t> info, std::span<std::uint8_t> coded) const {
  const std::size_t k = info_bits(), n = coded_bits();
  if (info.size() != k)
    throw ConfigError("ldpc info length", std::to_string(info.size()),
                      std::to_string(k) + " for code " + name_);
  if (coded.size() != n)
    throw ConfigError("ldpc coded length", std::to_string(coded.size()),
                      std::to_string(n) + " for code " + name_);

  if (kind_ == LdpcEncoderKind::dense) {
    std::array<std::uint64_t, kMaxDenseCodewordBits / 64> packed;
    std::fill_n(packed.begin(), dense_words_, 0);
    const auto& positions = *info_positions_;
    for (std::size_t j = 0; j < k; ++j) {
      const std::uint8_t bit = info[j] & 1u;
      coded[positions[j]] = bit;
      packed[j / 64] |= static_cast<std::uint64_t>(bit) << (j % 64);
    }
    for (std::size_t i = 0; i < parity_positions_.size(); ++i) {
      const std::uint64_t* row = dense_rows_.data() + i * dense_words_;
      std::uint64_t acc = 0;
      for (std::size_t w = 0; w < dense_words_; ++w) acc ^= row[w] & packed[w];
      coded[parity_positions_[i]] = static_cast<std::uint8_t>(std::popcount(acc) & 1);
    }
    return;
  }

  // Dual-diagonal encoder (the linear-time method the 802.11 structure is designed for).
  // With lambda_i = sum_j P^s(i,j) u_j over the info blocks of block row i, summing all block
  // rows cancels the staircase and the two equal shifts x of column k_b, leaving
  // P^y p_0 = sum_i lambda_i; the staircase then gives p_1 = lambda_0 + P^x p_0 and
  // p_{i+1} = p_i + lambda_i (+ P^y p_0 in the middle row).
  const unsigned mb = prototype_.block_rows, z = prototype_.lifting;
  const unsigned kb = prototype_.block_cols - mb;
  for (std::size_t j = 0; j < k; ++j) coded[j] = info[j] & 1u;
  std::uint8_t* parity = coded.data() + k;
  // P^s u: element r is u[(r + s) mod Z].
  auto add_shifted = [z](std::uint8_t* dst, const std::uint8_t* src, unsigned s) {
    for (unsigned r = 0; r + s < z; ++r) dst[r] ^= src[r + s];
    for (unsigned r = z - s; r < z; ++r) dst[r] ^= src[r + s - z];
  };
  for (unsigned i = 0; i < mb; ++i) {
    std::uint8_t* lambda = parity + static_cast<std::size_t>(i) * z;
    std::fill_n(lambda, z, std::uint8_t{0});
    for (unsigned j = 0; j < kb; ++j) {
      const int s = prototype_.shift(i, j);
      if (s >= 0)
        add_shifted(lambda, coded.data() + static_cast<std::size_t>(j) * z, static_cast<unsigned>(s));
    }
  }
  std::array<std::uint8_t, kMaxLifting> sum{}, p0{}, carry{};
  for (unsigned i = 0; i < mb; ++i)
    for (unsigned r = 0; r < z; ++r) sum[r] ^= parity[static_cast<std::size_t>(i) * z + r];
  // P^y p0 = sum  =>  p0[c] = sum[(c - y) mod Z].
  for (unsigned c = 0; c < z; ++c) p0[c] = sum[(c + z - hb_mid_shift_) % z];
  // carry = p_1 = lambda_0 + P^x p_0.
  for (unsigned r = 0; r < z; ++r) carry[r] = parity[r];
  add_shifted(carry.data(), p0.data(), hb_top_shift_);
  std::copy_n(p0.begin(), z, parity);
  for (unsigned i = 1; i + 1 < mb; ++i) {
    std::uint8_t* block = parity + static_cast<std::size_t>(i) * z;  // holds lambda_i
    std::array<std::uint8_t, kMaxLifting> next{};
    for (unsigned r = 0; r < z; ++r) next[r] = carry[r] ^ block[r];
    if (i == hb_mid_row_) add_shifted(next.data(), p0.data(), hb_mid_shift_);
    std::copy_n(carry.begin(), z, block);
    std::copy_n(next.begin(), z, carry.begin());
  }
  std::copy_n(carry.begin(), z, parity + static_cast<std::size_t>(mb - 1) * z);
}

std::unique_ptr<LdpcDecoder> LdpcCode::make_ldpc_decoder() const {
  return std::make_unique<LdpcDecoder>(*this);
}

std::unique_ptr<Decoder> LdpcCode::make_decoder() const { return make_ldpc_decoder(); }

// ---------------------------------------------------------------------------------------------
// LdpcDecoder

LdpcDecoder::LdpcDecoder(const LdpcCode& code)
    : h_(code.h_),
      info_positions_(code.info_positions_),
      config_(code.decoder_config()),
      posterior_(code.coded_bits()),
      check_msg_(code.parity_check().edges()),
      scratch_(code.parity_check().max_row_weight()) {}

DecodeReport LdpcDecoder::decode(std::span<const float> llr, std::span<std::uint8_t> info) {
  if (info.size() != info_positions_->size())
    throw ConfigError("ldpc info length", std::to_string(info.size()),
                      std::to_string(info_positions_->size()));
  const DecodeReport report = run(llr);
  const auto& positions = *info_positions_;
  for (std::size_t j = 0; j < positions.size(); ++j) info[j] = posterior_[positions[j]] < 0.0f ? 1 : 0;
  return report;
}

DecodeReport LdpcDecoder::decode_codeword(std::span<const float> llr, std::span<std::uint8_t> codeword) {
  if (codeword.size() != posterior_.size())
    throw ConfigError("ldpc codeword length", std::to_string(codeword.size()),
                      std::to_string(posterior_.size()));
  const DecodeReport report = run(llr);
  for (std::size_t c = 0; c < posterior_.size(); ++c) codeword[c] = posterior_[c] < 0.0f ? 1 : 0;
  return report;
}

DecodeReport LdpcDecoder::run(std::span<const float> llr) {
  if (llr.size() != posterior_.size())
    throw ConfigError("ldpc coded LLR length", std::to_string(llr.size()), std::to_string(posterior_.size()));
  const ParityCheckMatrix& h = *h_;
  const std::size_t rows = h.rows();
  float* post = posterior_.data();
  for (std::size_t c = 0; c < posterior_.size(); ++c) post[c] = std::clamp(llr[c], -kLlrClamp, kLlrClamp);
  std::fill(check_msg_.begin(), check_msg_.end(), 0.0f);

  // Hard decision: bit 1 where the posterior is negative.
  auto syndrome_zero = [&]() {
    for (std::size_t r = 0; r < rows; ++r) {
      unsigned parity = 0;
      for (std::uint32_t c : h.row(r)) parity ^= static_cast<unsigned>(post[c] < 0.0f);
      if (parity) return false;
    }
    return true;
  };
  if (syndrome_zero()) return {0, true};

  // Branch-free check-node update: the data decide the minima and signs at random, so
  // branches on them would mispredict about half the time.
  const bool normalised = config_.rule == MinSumRule::normalised;
  const float alpha = config_.normalisation, beta = config_.offset;
  float* q = scratch_.data();
  constexpr std::uint32_t kSignBit = 0x80000000u;
  for (int it = 1; it <= config_.max_iterations; ++it) {
    float* msg = check_msg_.data();
    for (std::size_t r = 0; r < rows; ++r) {
      const std::span<const std::uint32_t> cols = h.row(r);
      const std::size_t deg = cols.size();
      // Bit-to-check messages: posterior minus this check's previous contribution.
      float min1 = kLlrClamp, min2 = kLlrClamp;
      std::size_t arg = 0;
      std::uint32_t signs = 0;
      for (std::size_t j = 0; j < deg; ++j) {
        const float t = post[cols[j]] - msg[j];
        q[j] = t;
        const float a = std::fabs(t);
        signs ^= std::bit_cast<std::uint32_t>(t);
        arg = a < min1 ? j : arg;
        min2 = std::min(min2, std::max(min1, a));
        min1 = std::min(min1, a);
      }
      const float m1 = normalised ? alpha * min1 : std::max(min1 - beta, 0.0f);
      const float m2 = normalised ? alpha * min2 : std::max(min2 - beta, 0.0f);
      for (std::size_t j = 0; j < deg; ++j) {
        const float mag = j == arg ? m2 : m1;
        const std::uint32_t sign = (signs ^ std::bit_cast<std::uint32_t>(q[j])) & kSignBit;
        const float out = std::bit_cast<float>(std::bit_cast<std::uint32_t>(mag) | sign);
        msg[j] = out;
        post[cols[j]] = q[j] + out;
      }
      msg += deg;
    }
    if (syndrome_zero()) return {it, true};
  }
  return {config_.max_iterations, false};
}

}  // namespace qamsight
