// Prints the long-double reference of every benchmark case: the final cycle average of the
// output, and the same computed with half the Taylor step bound (the difference shows that the
// reference is converged), with the time each took.
//
//   bench_reference [periods]
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>

#include "reference.hpp"

namespace {

template <template <class> class Case>
void print_case(long periods) {
  using Solver = pwbench::ReferenceSolver<Case>;
  const auto start = std::chrono::steady_clock::now();
  const pwbench::ReferenceResult coarse = Solver({periods, 0.5L}).run();
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  const pwbench::ReferenceResult fine = Solver({periods, 0.125L}).run();
  const long double diff =
      std::fabs(coarse.final_average - fine.final_average) / std::fabs(fine.final_average);
  std::printf(
      "%s  %ld periods  average %.18Lf V  (step bound 0.125: %.18Lf V, rel. diff %.2Le)"
      "  %ld events  %ld steps  %.2f s\n",
      Case<double>::kName.data(), periods, coarse.final_average, fine.final_average, diff,
      coarse.events, coarse.steps, seconds);
}

}  // namespace

int main(int argc, char** argv) {
  const long periods = argc > 1 ? std::atol(argv[1]) : 20000;
  print_case<pwbench::DcmBoost>(periods);
  print_case<pwbench::SyncBuck>(periods);
  print_case<pwbench::InterleavedBuck>(periods);
  print_case<pwbench::DcmSepic>(periods);
  return 0;
}
