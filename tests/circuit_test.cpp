#include <gtest/gtest.h>
#include "pulsewise/pulsewise.hpp"
TEST(Circuit, BuilderKeepsElementsInOrder) {
  pulsewise::Circuit c;
  c.add_resistor("R1", "a", "0", 10.0).add_capacitor("C1", "a", "0", 1e-6);
  ASSERT_EQ(c.elements().size(), 2u);
  EXPECT_EQ(c.find_element("C1"), 1);
}
