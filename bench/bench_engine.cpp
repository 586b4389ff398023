// Benchmark of the Fock engine: time per sweep point (TMST closed form -> thermal-loss channel
// by Kraus operators on mode B with (tau, n_E) = (0.9995, 1250) -> E_N -> fidelity) for the
// sector and dense engines, peak memory, dense/sector ratio and the scaling exponent of the
// sector engine. Prints a table and one JSON line. Usage: bench_engine [--quick]
//
// Each configuration runs in a child process, so that its peak resident memory (getrusage
// ru_maxrss) is its own. Workspaces are built once per configuration, as in a sweep; the first
// point (which sizes them) is timed separately and the steady-state time is the median over
// repeats.
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <map>
#include <string>
#include <vector>

#include "heraldry/fock.hpp"
#include "heraldry/gaussian.hpp"
#include "heraldry/measures.hpp"

using namespace heraldry;

namespace {

struct Result {
  int cutoff = 0;
  int dense = 0;
  int repeats = 0;
  double first_s = 0.0;    // first point, workspaces being sized
  double point_s = 0.0;    // median steady-state time per point
  double state_s = 0.0, channel_s = 0.0, entanglement_s = 0.0, fidelity_s = 0.0;  // medians
  double peak_rss_mb = 0.0;
  double state_mb = 0.0;
  double log_negativity = 0.0, fidelity = 0.0, truncation = 0.0;
};

using clock_type = std::chrono::steady_clock;
double seconds_since(clock_type::time_point t0) {
  return std::chrono::duration<double>(clock_type::now() - t0).count();
}

double median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  return v[v.size() / 2];
}

template <class State, class Make>
Result run(int cutoff, bool dense, Make make) {
  const auto form = gaussian::tmst(0.8, 0.01);
  const link::Channel channel{0.9995, 1250.0};
  fock::Workspace fw;
  measures::Workspace mw;
  Result r;
  r.cutoff = cutoff;
  r.dense = dense ? 1 : 0;
  std::vector<double> total, t_state, t_channel, t_ent, t_fid;
  const auto start = clock_type::now();
  for (int rep = 0;; ++rep) {
    auto t0 = clock_type::now();
    State s = make(form, cutoff);
    const double a = seconds_since(t0);
    t0 = clock_type::now();
    fock::apply_channel(s, Mode::B, channel, fw);
    const double b = seconds_since(t0);
    t0 = clock_type::now();
    const auto e = measures::entanglement(s, mw);
    const double c = seconds_since(t0);
    t0 = clock_type::now();
    const double f = measures::fidelity(s, mw);
    const double d = seconds_since(t0);
    if (rep == 0) {
      r.first_s = a + b + c + d;
      r.log_negativity = e.log_negativity;
      r.fidelity = f;
      r.truncation = s.truncation_loss();
      r.state_mb = static_cast<double>(s.memory_bytes()) / 1e6;
    } else {
      total.push_back(a + b + c + d);
      t_state.push_back(a);
      t_channel.push_back(b);
      t_ent.push_back(c);
      t_fid.push_back(d);
    }
    // At least one steady-state repeat; more until ~1 s has been spent (at most 200).
    if (rep >= 1 && (seconds_since(start) > 1.0 || rep >= 200)) break;
  }
  r.repeats = static_cast<int>(total.size());
  r.point_s = median(total);
  r.state_s = median(t_state);
  r.channel_s = median(t_channel);
  r.entanglement_s = median(t_ent);
  r.fidelity_s = median(t_fid);
  struct rusage usage {};
  getrusage(RUSAGE_SELF, &usage);
  r.peak_rss_mb = usage.ru_maxrss / 1024.0;  // kilobytes on Linux
  return r;
}

// Runs one configuration in a child process and reads its Result back through a pipe.
bool run_isolated(int cutoff, bool dense, Result& out) {
  int fd[2];
  if (pipe(fd) != 0) return false;
  const pid_t pid = fork();
  if (pid < 0) return false;
  if (pid == 0) {
    close(fd[0]);
    const Result r = dense ? run<fock::DenseState>(cutoff, true, [](const auto& f, int n) { return fock::dense_state(f, n); })
                           : run<fock::SectorState>(cutoff, false, [](const auto& f, int n) { return fock::sector_state(f, n); });
    const ssize_t written = write(fd[1], &r, sizeof r);
    close(fd[1]);
    _exit(written == static_cast<ssize_t>(sizeof r) ? 0 : 1);
  }
  close(fd[1]);
  const ssize_t got = read(fd[0], &out, sizeof out);
  close(fd[0]);
  int status = 0;
  waitpid(pid, &status, 0);
  return got == static_cast<ssize_t>(sizeof out) && WIFEXITED(status) && WEXITSTATUS(status) == 0;
}

// Least-squares slope of ln t against ln N.
double exponent(const std::vector<Result>& rs, int from_cutoff) {
  double sx = 0, sy = 0, sxx = 0, sxy = 0;
  int n = 0;
  for (const auto& r : rs) {
    if (r.dense || r.cutoff < from_cutoff) continue;
    const double x = std::log(r.cutoff), y = std::log(r.point_s);
    sx += x;
    sy += y;
    sxx += x * x;
    sxy += x * y;
    ++n;
  }
  return n < 2 ? 0.0 : (n * sxy - sx * sy) / (n * sxx - sx * sx);
}

}  // namespace

int main(int argc, char** argv) {
  const bool quick = argc > 1 && std::strcmp(argv[1], "--quick") == 0;
  std::vector<int> sector_cutoffs = {10, 20, 30, 40, 60, 100};
  std::vector<int> dense_cutoffs = {10, 20, 30, 40};
  if (quick) {
    sector_cutoffs = {10, 20, 30};
    dense_cutoffs = {10, 20};
  }
  std::vector<Result> results;
  std::printf("point: TMST(r=0.8, n_th=0.01) closed form -> thermal loss (0.9995, 1250) on B via Kraus -> E_N -> F\n");
  std::printf("%7s %7s %5s %11s %11s %10s %10s %10s %10s %10s %9s %9s %12s %10s\n", "engine", "cutoff", "reps",
              "first_s", "point_s", "state_s", "channel_s", "E_N_s", "F_s", "E_N", "F", "ledger", "state_MB",
              "peak_MB");
  auto report = [&](bool dense, int cutoff) {
    Result r;
    if (!run_isolated(cutoff, dense, r)) {
      std::fprintf(stderr, "bench_engine: configuration %s/%d failed\n", dense ? "dense" : "sector", cutoff);
      return;
    }
    std::printf("%7s %7d %5d %11.3e %11.3e %10.3e %10.3e %10.3e %10.3e %10.7f %9.7f %9.1e %12.3f %10.1f\n",
                dense ? "dense" : "sector", r.cutoff, r.repeats, r.first_s, r.point_s, r.state_s, r.channel_s,
                r.entanglement_s, r.fidelity_s, r.log_negativity, r.fidelity, r.truncation, r.state_mb,
                r.peak_rss_mb);
    std::fflush(stdout);
    results.push_back(r);
  };
  for (int n : sector_cutoffs) report(false, n);
  for (int n : dense_cutoffs) report(true, n);

  std::map<int, double> sector_time, ratio;
  for (const auto& r : results)
    if (!r.dense) sector_time[r.cutoff] = r.point_s;
  for (const auto& r : results)
    if (r.dense && sector_time.count(r.cutoff)) ratio[r.cutoff] = r.point_s / sector_time[r.cutoff];
  std::printf("\ndense / sector time per point:");
  for (const auto& [n, x] : ratio) std::printf("  N=%d: %.0fx", n, x);
  const double p_all = exponent(results, 0), p_tail = exponent(results, 30);
  std::printf("\nsector time ~ N^p: p = %.2f (all cutoffs), %.2f (N >= 30)\n", p_all, p_tail);
  if (sector_time.count(100)) std::printf("sector point at N = 100: %.3f s\n", sector_time[100]);

  std::printf("{\"bench\":\"engine\",\"point\":\"tmst(0.8,0.01)->thermal_loss(0.9995,1250) on b->E_N->F\",\"results\":[");
  for (std::size_t i = 0; i < results.size(); ++i) {
    const auto& r = results[i];
    std::printf("%s{\"engine\":\"%s\",\"cutoff\":%d,\"repeats\":%d,\"first_s\":%.6e,\"point_s\":%.6e,"
                "\"state_s\":%.6e,\"channel_s\":%.6e,\"entanglement_s\":%.6e,\"fidelity_s\":%.6e,"
                "\"log_negativity\":%.10f,\"fidelity\":%.10f,\"truncation_loss\":%.3e,\"state_mb\":%.4f,"
                "\"peak_rss_mb\":%.1f}",
                i ? "," : "", r.dense ? "dense" : "sector", r.cutoff, r.repeats, r.first_s, r.point_s, r.state_s,
                r.channel_s, r.entanglement_s, r.fidelity_s, r.log_negativity, r.fidelity, r.truncation, r.state_mb,
                r.peak_rss_mb);
  }
  std::printf("],\"dense_over_sector\":{");
  bool first = true;
  for (const auto& [n, x] : ratio) {
    std::printf("%s\"%d\":%.2f", first ? "" : ",", n, x);
    first = false;
  }
  std::printf("},\"sector_exponent_all\":%.3f,\"sector_exponent_from_30\":%.3f}\n", p_all, p_tail);
  return 0;
}
