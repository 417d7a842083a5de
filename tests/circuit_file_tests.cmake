# Circuit-file loader and SI value parsing.
pulsewise_add_test(si_value_test SOURCES ${CMAKE_CURRENT_LIST_DIR}/si_value_test.cpp LIBS pulsewise::circuit_file)
pulsewise_add_test(circuit_file_test SOURCES ${CMAKE_CURRENT_LIST_DIR}/circuit_file_test.cpp LIBS pulsewise::circuit_file)
