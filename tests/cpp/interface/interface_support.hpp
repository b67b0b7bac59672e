#pragma once
// Helpers of the interface tests: scratch folders, running the command-line program,
// files of the source tree, and a small design built in code.
#include <algorithm>
#include <atomic>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <system_error>
#include <vector>

#if !defined(_WIN32)
#include <sys/wait.h>
#include <unistd.h>
#endif

#include "lotwise/lotwise.hpp"

namespace lotwise::testing {

/// A fresh, empty folder for one test, removed with everything in it afterwards.
class ScratchDir {
 public:
  ScratchDir() {
    static std::atomic<unsigned> counter{0};
    std::ostringstream name;
    name << "t" << process_id() << "_" << counter++;
    path_ = std::filesystem::path(LOTWISE_TEST_SCRATCH_DIR) / name.str();
    std::filesystem::remove_all(path_);
    std::filesystem::create_directories(path_);
  }
  ~ScratchDir() {
    std::error_code ignored;
    std::filesystem::remove_all(path_, ignored);
  }
  ScratchDir(const ScratchDir&) = delete;
  ScratchDir& operator=(const ScratchDir&) = delete;

  const std::filesystem::path& path() const { return path_; }
  std::string file(const std::string& name) const { return (path_ / name).string(); }
  /// Names of the entries in the folder, sorted.
  std::vector<std::string> entries() const {
    std::vector<std::string> names;
    for (const auto& e : std::filesystem::directory_iterator(path_)) {
      names.push_back(e.path().filename().string());
    }
    std::sort(names.begin(), names.end());
    return names;
  }

 private:
  static long process_id() {
#if defined(_WIN32)
    return 0;
#else
    return static_cast<long>(::getpid());
#endif
  }
  std::filesystem::path path_;
};

inline std::string read_text(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream out;
  out << in.rdbuf();
  return out.str();
}

inline void write_text(const std::string& path, const std::string& text) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out << text;
}

inline std::string example_path(const std::string& name) {
  return std::string(LOTWISE_EXAMPLES_DIR) + "/" + name;
}

inline std::string bad_design_path(const std::string& name) {
  return std::string(LOTWISE_TEST_DATA_DIR) + "/bad/" + name;
}

/// Lines of a text, without their line ends; a trailing empty line is dropped.
inline std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

/// What one run of a program gave.
struct CommandResult {
  int status = -1;  ///< exit status; -1 if it did not exit normally
  std::string out;
  std::string err;
};

/// Quotes a word for the POSIX shell.
inline std::string shell_quote(const std::string& word) {
  std::string quoted = "'";
  for (char c : word) quoted += c == '\'' ? std::string("'\\''") : std::string(1, c);
  return quoted + "'";
}

/// Runs `program args...` through the shell in `dir`'s scratch files, capturing stdout
/// and stderr apart.
inline CommandResult run_program(const std::string& program, const std::vector<std::string>& args,
                                 const ScratchDir& dir) {
  const std::string out_file = dir.file("captured.stdout");
  const std::string err_file = dir.file("captured.stderr");
  std::string command = shell_quote(program);
  for (const auto& a : args) command += " " + shell_quote(a);
  command += " > " + shell_quote(out_file) + " 2> " + shell_quote(err_file) + " < /dev/null";
  const int raw = std::system(command.c_str());
  CommandResult r;
#if defined(_WIN32)
  r.status = raw;
#else
  r.status = raw != -1 && WIFEXITED(raw) ? WEXITSTATUS(raw) : -1;
#endif
  r.out = read_text(out_file);
  r.err = read_text(err_file);
  std::filesystem::remove(out_file);
  std::filesystem::remove(err_file);
  return r;
}

/// A difference amplifier (R1 to the - input, R2 feedback, R3 to the + input, R4 to
/// ground) with an ideal op-amp: gain R2/R1 when the ratios match.
inline Circuit difference_amplifier(double r1, double r2, double r3, double r4) {
  Circuit c;
  c.add_voltage_source("VP", "in_p", "gnd", 0.0);
  c.add_voltage_source("VN", "in_n", "gnd", 0.0);
  c.add_opamp("U1", "p", "n", "out", OpAmpSpec{});
  c.add_resistor("R1", "in_n", "n", r1);
  c.add_resistor("R2", "n", "out", r2);
  c.add_resistor("R3", "in_p", "p", r3);
  c.add_resistor("R4", "p", "gnd", r4);
  return c;
}

}  // namespace lotwise::testing
