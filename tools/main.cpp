// qamsight command-line driver: registers the subcommands and maps errors to exit codes.
#include <cstdio>
#include <exception>
#include <new>

#include "cli.hpp"
#include "mpi_session.hpp"
#include "qamsight/core.hpp"

int main(int argc, char** argv) {
  using namespace qamsight;
  const cli::MpiSession mpi(argc, argv);  // MPI only when built with it and started by mpirun/srun
  CLI::App app{"qamsight: simulate and measure digital radio links (QAM modems, BER/EVM, coding, link margins)",
               "qamsight"};
  app.set_version_flag("--version", std::string("qamsight ") + std::string(version()) + cli::mpi_build_tag());
  app.require_subcommand(1);
  app.fallthrough(false);
  cli::register_sweep(app);
  cli::register_theory(app);
  cli::register_check(app);
  cli::register_demo(app);
  cli::register_link(app);
  cli::register_modcod(app);
  cli::register_evm(app);
  cli::register_waveform(app);
  cli::register_report(app);
  if (argc > 1 && argv[1][0] != '-') {  // CLI11 calls an unknown subcommand a missing one
    std::string names;
    bool known = false;
    const CLI::App& top = app;
    for (const auto* sc : top.get_subcommands(std::function<bool(const CLI::App*)>{})) {
      known = known || sc->get_name() == argv[1];
      names += (names.empty() ? "" : ", ") + sc->get_name();
    }
    if (!known) {
      std::fprintf(stderr, "qamsight: error: unknown subcommand '%s'; allowed: %s\n", argv[1], names.c_str());
      return cli::kUsage;
    }
  }
  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForAllHelp& e) {
    return app.exit(e);
  } catch (const CLI::CallForVersion& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    std::fprintf(stderr, "qamsight: error: %s (see --help)\n", e.what());
    return cli::kUsage;
  } catch (const cli::UsageError& e) {
    std::fprintf(stderr, "qamsight: error: %s\n", e.what());
    return cli::kUsage;
  } catch (const ConfigError& e) {
    std::fprintf(stderr, "qamsight: error: %s\n", e.what());
    return cli::kUsage;
  } catch (const InputError& e) {
    std::fprintf(stderr, "qamsight: error: %s\n", e.what());
    return cli::kUsage;
  } catch (const std::bad_alloc&) {
    std::fprintf(stderr, "qamsight: error: out of memory\n");
    return cli::kUsage;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "qamsight: error: %s\n", e.what());
    return cli::kUsage;
  }
  return cli::exit_status();
}
