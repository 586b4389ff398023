// Test helper: runs the heraldry executable (HERALDRY_BINARY) with arguments, as a user would,
// and returns its exit code and everything it printed.
#pragma once

#include <doctest/doctest.h>

#include <sys/wait.h>

#include <cstdio>
#include <string>

namespace heraldry::testing {

struct Outcome {
  int code = -1;
  std::string output;  // stdout and stderr together
};

/// `env` is prepended to the command line (e.g. "NAME=value "): variables for this run only.
inline Outcome run_tool_env(const std::string& env, const std::string& args) {
  const std::string cmd = env + "\"" + HERALDRY_BINARY + "\" " + args + " 2>&1";
  Outcome o;
  FILE* pipe = ::popen(cmd.c_str(), "r");
  REQUIRE(pipe != nullptr);
  char buf[4096];
  std::size_t n;
  while ((n = std::fread(buf, 1, sizeof buf, pipe)) > 0) o.output.append(buf, n);
  const int status = ::pclose(pipe);
  o.code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return o;
}

inline Outcome run_tool(const std::string& args) { return run_tool_env("", args); }

}  // namespace heraldry::testing
