// The one place toml++ is included. It is used header-only, with exceptions, and with its
// internal assertions off: toml++ 3.3 asserts preconditions of its own parser that malformed
// input can break (a header such as "[[[capacitor]]" trips one in parse_key), which would abort
// a debug build on a user's typo. With the assertion off the parser goes on to report a
// toml::parse_error, as release builds do. (With GCC, TOML_ASSERT_ASSUME then expands to
// nothing; a compiler with __builtin_assume would turn it into an assumption, see
// toml++/impl/preprocessor.h.)
#pragma once

#define TOML_HEADER_ONLY 1
#define TOML_EXCEPTIONS 1
#define TOML_ASSERT(expr) static_assert(true)

#include <toml++/toml.h>
