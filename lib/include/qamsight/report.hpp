// report: one self-contained HTML page (inline SVG, no scripts, no fetched fonts) of a run.
#pragma once

#include <string>
#include <vector>

namespace qamsight {

/// One figure of a report: an SVG document (from the figure writers) and its caption.
struct ReportFigure {
  std::string svg;      ///< a complete <svg> element (an XML declaration, if any, is dropped)
  std::string caption;  ///< plain text
};

/// A table of a report: plain-text cells (escaped on output). Columns whose header ends in
/// "]" or that hold numbers are right-aligned.
struct ReportTable {
  std::string caption;
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;
  /// Row classes, parallel to rows (may be empty): "pass", "fail" or "best" colour a row.
  std::vector<std::string> row_class;
};

/// One section: a heading, a short lead paragraph, tables, figures and notes.
struct ReportSection {
  std::string id;     ///< anchor name: letters, digits and '-' only
  std::string title;  ///< heading
  std::string lead;   ///< plain-text paragraph under the heading
  /// Optional verdict badge beside the heading: "PASS", "FAIL" or empty.
  std::string verdict;
  std::vector<ReportTable> tables;
  std::vector<ReportFigure> figures;
  std::vector<std::string> notes;
};

struct ReportDocument {
  std::string title = "qamsight report";
  std::string subtitle;              ///< e.g. what produced the run, and when
  std::vector<ReportSection> sections;
  std::vector<std::string> missing;  ///< sections that the run did not produce, one line each
  std::vector<std::string> cautions; ///< shown in a box at the end
};

/// Renders the document as one HTML5 file: a contents list, the sections in order, inline
/// SVG figures that scale with the page, print rules (no figure split over pages), and no
/// reference to any other file or network resource. Throws ConfigError when a section id is
/// empty or not made of letters, digits and '-', or when a figure is not an <svg> element.
std::string report_html(const ReportDocument& document);

/// Gathers the results that `qamsight demo` (or the individual subcommands) wrote into a
/// folder and builds the report from them. Files read when present:
///   waterfall.json          sweep (sweep JSON): waterfall table; the figure is redrawn from it
///   constellation.svg, eye.svg, spectrum.svg        signal figures
///   evm-budget.json, evm-budget.svg                 EVM budget table, verdict, bars
///   link.json, link-throughput.svg, link-esn0.svg   MODCOD-by-elevation table and figures
/// Sections whose files are absent are listed in `missing`. Throws InputError naming the file
/// when one is present but malformed, and when the folder has none of them.
ReportDocument report_from_folder(const std::string& folder);

}  // namespace qamsight
