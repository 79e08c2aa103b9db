// `qamsight report`: one self-contained HTML page from the results a run wrote to a folder.
#include <cstdio>
#include <filesystem>

#include "cli.hpp"
#include "qamsight/report.hpp"

namespace qamsight::cli {

namespace {

struct ReportOptions {
  std::string folder;
  std::string out;
  std::string title;
};

int run(const ReportOptions& o) {
  const std::string out = o.out.empty() ? (std::filesystem::path(o.folder) / "report.html").string() : o.out;
  ReportDocument d = report_from_folder(o.folder);  // names the folder first when it is wrong
  require_output_paths({{"--out", out}});
  if (!o.title.empty()) d.title = o.title;
  write_output(out, report_html(d), "HTML report");
  std::printf("report: %zu sections", d.sections.size());
  for (const auto& s : d.sections) std::printf("%s %s", &s == &d.sections.front() ? ":" : ",", s.title.c_str());
  std::printf("\n");
  for (const auto& m : d.missing) std::printf("  not in this run: %s\n", m.c_str());
  return kOk;
}

}  // namespace

void register_report(CLI::App& app) {
  auto o = std::make_shared<ReportOptions>();
  CLI::App* s = app.add_subcommand(
      "report", "Gather a run's results (waterfall, signal views, EVM budget, MODCOD over the pass) into one HTML file");
  s->add_option("folder", o->folder, "Folder with the run's files (as written by 'qamsight demo')")->required();
  s->add_option("--out", o->out, "HTML file to write (default FOLDER/report.html)");
  s->add_option("--title", o->title, "Title of the page");
  s->callback([o] { exit_status() = run(*o); });
}

}  // namespace qamsight::cli
