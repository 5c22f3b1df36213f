// The only place where errors become messages and exit codes.
#include <iostream>

#include "cli/commands.hpp"
#include "cli/outputs.hpp"
#include "loopaudit/error.hpp"

int main(int argc, char** argv) {
  using namespace loopaudit;
  CLI::App app{"loopaudit: loop frequency response and stability margins from bench injection recordings"};
  app.set_version_flag("--version", std::string("loopaudit ") + LOOPAUDIT_VERSION);
  app.require_subcommand(1);
  const std::string command_line = cli::command_line_text(argc, argv);
  cli::add_analyze(app, command_line);
  cli::add_inspect(app);
  cli::add_table(app, command_line);
  cli::add_synth(app);
  try {
    app.parse(argc, argv);
    return cli::kOk;
  } catch (const CLI::Success& e) {
    return app.exit(e);
  } catch (const CLI::ParseError& e) {
    app.exit(e);
    return cli::kUsage;
  } catch (const InputError& e) {
    std::cerr << "loopaudit: input: " << e.what() << "\n";
    return cli::kInput;
  } catch (const ConfigError& e) {
    std::cerr << "loopaudit: settings: " << e.what() << "\n";
    return cli::kConfig;
  } catch (const NumericalError& e) {
    std::cerr << "loopaudit: no result: " << e.what() << "\n";
    return cli::kNoResult;
  } catch (const OutputError& e) {
    std::cerr << "loopaudit: output: " << e.what() << "\n";
    return cli::kOutput;
  } catch (const std::bad_alloc&) {
    std::cerr << "loopaudit: out of memory\n";
    return cli::kInternal;
  } catch (const std::exception& e) {
    std::cerr << "loopaudit: internal error: " << e.what() << "\n";
    return cli::kInternal;
  }
}
