# Suites of the core library, one per concept.
pulsewise_add_test(circuit_test SOURCES circuit_test.cpp LIBS pulsewise::core)
