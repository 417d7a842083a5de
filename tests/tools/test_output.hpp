// A fresh, empty output folder per test: <build>/test-output/<area>/<suite>.<test>.
#pragma once

#include <gtest/gtest.h>

#include <filesystem>
#include <string>

namespace pulsewise::testing {

inline std::filesystem::path fresh_output_dir(const std::string& area) {
  const auto* test = ::testing::UnitTest::GetInstance()->current_test_info();
  const std::filesystem::path dir = std::filesystem::path(PULSEWISE_BINARY_DIR) / "test-output" /
                                    area /
                                    (std::string(test->test_suite_name()) + "." + test->name());
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  return dir;
}

}  // namespace pulsewise::testing
