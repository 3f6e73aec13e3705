#pragma once
// The contract every stage's Options struct keeps: validate() accepts the defaults and
// refuses a value out of range with an Error naming the field, what was expected and
// what was found.
#include <gtest/gtest.h>

#include <string>

#include "core/error.hpp"

namespace overtone::testing_support {

// The message of the Error that validate() throws, or "" when it accepts the options.
template <typename Options>
std::string refusal_of(const Options& options) {
  try {
    options.validate();
  } catch (const Error& error) {
    return error.what();
  }
  return "";
}

// validate() refuses the options with a message that names the field and says what it
// expected and what it found.
template <typename Options>
void expect_refused_naming(const Options& options, const std::string& field) {
  const std::string message = refusal_of(options);
  ASSERT_FALSE(message.empty()) << "validate() accepted a bad " << field;
  EXPECT_NE(message.find(field), std::string::npos) << message;
  EXPECT_NE(message.find("expected"), std::string::npos) << message;
  EXPECT_NE(message.find("found"), std::string::npos) << message;
}

}  // namespace overtone::testing_support
