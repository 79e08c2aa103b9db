// Test driver of the bad-input matrix: reads one file with one named reader and reports like
// the qamsight program does (exit 0 and a summary, or exit 2 and a one-line error).
#include <cstdio>
#include <exception>
#include <string>

#include "qamsight/io.hpp"
#include "readers.hpp"

int main(int argc, char** argv) {
  using namespace qamsight;
  if (argc != 3 || !fuzz::find_reader(argv[1])) {
    std::string names;
    for (const auto& r : fuzz::readers()) names += std::string(names.empty() ? "" : ", ") + r.name;
    std::fprintf(stderr, "usage: reader_probe READER FILE (READER: %s)\n", names.c_str());
    return 2;
  }
  const fuzz::Reader& reader = *fuzz::find_reader(argv[1]);
  const std::string path = argv[2];
  try {
    const std::string summary =
        reader.read_path ? reader.read_path(path) : reader.parse(read_text_file(path, reader.name), path);
    std::printf("%s\n", summary.c_str());
    return 0;
  } catch (const InputError& e) {
    std::fprintf(stderr, "reader_probe: error: %s\n", e.what());
    return 2;
  } catch (const ConfigError& e) {
    std::fprintf(stderr, "reader_probe: error: %s\n", e.what());
    return 2;
  }
  // Any other exception escapes: std::terminate, a signal, and the matrix test fails.
}
