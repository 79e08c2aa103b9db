// fec: the code factory: built-in code names, their descriptions, and alist-file codes.
#include "qamsight/fec.hpp"

#include <string>

namespace qamsight {

namespace {

constexpr std::string_view kAlistPrefix = "ldpc-alist:";

struct ConvName {
  const char* name;
  ConvRate rate;
};
constexpr ConvName kConvNames[] = {{"conv-k7-r1/2", ConvRate::r1_2},
                                   {"conv-k7-r2/3", ConvRate::r2_3},
                                   {"conv-k7-r3/4", ConvRate::r3_4},
                                   {"conv-k7-r5/6", ConvRate::r5_6}};

struct LdpcName {
  std::size_t n;
  int num, den;
};
constexpr LdpcName kLdpcNames[] = {{648, 1, 2},  {648, 2, 3},  {648, 3, 4},  {648, 5, 6},
                                   {1296, 1, 2}, {1296, 2, 3}, {1296, 3, 4}, {1296, 5, 6},
                                   {1944, 1, 2}, {1944, 2, 3}, {1944, 3, 4}, {1944, 5, 6}};

std::string ldpc_name(const LdpcName& e) {
  return "ldpc-" + std::to_string(e.n) + "-r" + std::to_string(e.num) + "/" + std::to_string(e.den);
}

std::string allowed_names() {
  std::string list;
  for (const CodeNameInfo& info : code_names()) list += (list.empty() ? "" : ", ") + info.name;
  return list;
}

}  // namespace

const std::vector<CodeNameInfo>& code_names() {
  static const std::vector<CodeNameInfo> names = [] {
    std::vector<CodeNameInfo> out;
    for (const ConvName& c : kConvNames) {
      const std::string rate = std::string(c.name).substr(9);
      out.push_back({c.name, "K=7 (171,133 octal) convolutional code, rate " + rate +
                                 ", zero-tail frames (1024 info bits by default), soft Viterbi"});
    }
    for (const LdpcName& e : kLdpcNames)
      out.push_back({ldpc_name(e), "IEEE 802.11n/ac LDPC code, n=" + std::to_string(e.n) + ", rate " +
                                       std::to_string(e.num) + "/" + std::to_string(e.den) +
                                       " (Z=" + std::to_string(e.n / 24) + "), layered min-sum decoding"});
    out.push_back({"ldpc-alist:PATH",
                   "LDPC code from a parity-check matrix in alist format, dense systematic encoder"});
    return out;
  }();
  return names;
}

std::shared_ptr<const Code> make_code(std::string_view name, const CodeOptions& options) {
  for (const ConvName& c : kConvNames)
    if (name == c.name)
      return std::make_shared<ConvolutionalCode>(ConvolutionalCodeConfig{options.conv_info_bits, c.rate});
  for (const LdpcName& e : kLdpcNames)
    if (name == ldpc_name(e))
      return std::make_shared<LdpcCode>(std::string(name), ieee80211_ldpc_prototype(e.n, e.num, e.den),
                                        options.ldpc);
  if (name.substr(0, kAlistPrefix.size()) == kAlistPrefix) {
    const std::string path(name.substr(kAlistPrefix.size()));
    if (path.empty()) throw ConfigError("code", std::string(name), "ldpc-alist:PATH with a file path");
    return std::make_shared<LdpcCode>(std::string(name), ParityCheckMatrix::read_alist(path), options.ldpc);
  }
  throw ConfigError("code", std::string(name), allowed_names());
}

}  // namespace qamsight
