// `pulsewise verify`: simulate the grid of ideal converters and print the comparison table.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "commands.hpp"
#include "exit_codes.hpp"
#include "progress.hpp"

namespace pulsewise::app {
namespace {

nlohmann::json row_json(const VerifyRow& r) {
  return {{"converter", to_string(r.point.converter)},
          {"duty", r.point.duty},
          {"k", r.point.k},
          {"k_crit", r.k_crit},
          {"mode_expected", r.ccm_expected ? "CCM" : "DCM"},
          {"mode_checked", r.mode_checked},
          {"mode_simulated", to_string(r.mode)},
          {"ratio_closed_form", r.ratio_expected},
          {"ratio_simulated", r.ratio_simulated},
          {"ratio_error", r.ratio_error},
          {"ripple", r.ripple},
          {"cycles", r.cycles},
          {"end", to_string(r.end)},
          {"passed", r.passed()},
          {"note", r.note}};
}

}  // namespace

int verify_command(const VerifyCommandOptions& options) {
  options.verify.validate();
  const std::vector<VerifyPoint> points = verify_points(options.verify);
  const bool progress = !options.quiet && ProgressLine::is_terminal(stderr);
  std::vector<VerifyRow> rows;
  rows.reserve(points.size());
  for (std::size_t i = 0; i < points.size(); ++i) {
    const VerifyPoint& p = points[i];
    if (progress) {
      fmt::print(stderr, "\rverify {}/{}: {} D={} K={:.5g}        ", i + 1, points.size(),
                 to_string(p.converter), p.duty, p.k);
      std::fflush(stderr);
    }
    rows.push_back(check_point(p, options.verify));
  }
  if (progress) fmt::print(stderr, "\r{:<70}\r", "");

  bool all_passed = true;
  for (const VerifyRow& r : rows) all_passed = all_passed && r.passed();
  if (options.json) {
    nlohmann::json out = {{"format", "pulsewise-verify"}, {"passed", all_passed}};
    out["rows"] = nlohmann::json::array();
    for (const VerifyRow& r : rows) out["rows"].push_back(row_json(r));
    fmt::print("{}\n", out.dump(2));
  } else {
    print_verify_table(rows);
  }
  return all_passed ? kExitOk : kExitVerifyFailed;
}

}  // namespace pulsewise::app
