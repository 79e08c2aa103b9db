// Runs every checked-in fuzz input (seed corpora and past findings, corpus/<reader>/) through
// its reader: each must end normally or in InputError/ConfigError. Fails if a reader has no
// corpus folder or a folder names no reader, so the corpora and readers.hpp stay in step.
#include <algorithm>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>
#include <stdexcept>
#include <string>

#include "readers.hpp"

int main(int argc, char** argv) {
  namespace fs = std::filesystem;
  using namespace qamsight;
  if (argc < 2) {
    std::fprintf(stderr, "usage: corpus_replay CORPUS_DIR [READER...]\n");
    return 2;
  }
  const fs::path root(argv[1]);
  std::set<std::string> expected;
  for (const auto& r : fuzz::readers()) expected.insert(r.name);
  for (int i = 2; i < argc; ++i) {
    if (!expected.count(argv[i])) {
      std::fprintf(stderr, "corpus_replay: the build lists reader '%s', readers.hpp does not\n", argv[i]);
      return 1;
    }
  }
  if (argc > 2 && static_cast<std::size_t>(argc - 2) != expected.size()) {
    std::fprintf(stderr, "corpus_replay: readers.hpp has %zu readers, the build lists %d\n", expected.size(),
                 argc - 2);
    return 1;
  }
  std::error_code ec;
  std::set<std::string> seen;
  std::size_t findings = 0;
  for (const auto& dir : fs::directory_iterator(root, ec)) {
    if (!dir.is_directory()) continue;
    const std::string name = dir.path().filename().string();
    const fuzz::Reader* reader = fuzz::find_reader(name);
    if (!reader) {
      std::fprintf(stderr, "corpus_replay: folder %s names no reader\n", dir.path().c_str());
      return 1;
    }
    seen.insert(name);
    std::size_t inputs = 0, accepted = 0;
    for (const auto& e : fs::recursive_directory_iterator(dir.path())) {
      if (!e.is_regular_file()) continue;
      std::ifstream in(e.path(), std::ios::binary);
      std::ostringstream ss;
      ss << in.rdbuf();
      ++inputs;
      try {
        (void)reader->parse(ss.str(), e.path().string());
        ++accepted;
      } catch (const InputError&) {
      } catch (const ConfigError&) {
      } catch (const std::exception& x) {  // a finding: name the input, go on with the rest
        std::fprintf(stderr, "corpus_replay: %s: not an InputError/ConfigError: %s\n", e.path().c_str(), x.what());
        ++findings;
      }
    }
    if (inputs == 0) {
      std::fprintf(stderr, "corpus_replay: folder %s is empty\n", dir.path().c_str());
      return 1;
    }
    std::printf("%-18s %4zu inputs, %4zu accepted, the rest rejected with InputError/ConfigError\n",
                name.c_str(), inputs, accepted);
  }
  if (ec) {
    std::fprintf(stderr, "corpus_replay: %s: %s\n", root.c_str(), ec.message().c_str());
    return 1;
  }
  for (const auto& r : expected) {
    if (!seen.count(r)) {
      std::fprintf(stderr, "corpus_replay: reader %s has no corpus folder under %s\n", r.c_str(), root.c_str());
      return 1;
    }
  }
  return findings == 0 ? 0 : 1;
}
