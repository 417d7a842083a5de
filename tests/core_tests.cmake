# Suites of the core library, one per concept.
pulsewise_add_test(circuit_test SOURCES circuit_test.cpp LIBS pulsewise::core)
pulsewise_add_test(topology_test SOURCES topology_test.cpp LIBS pulsewise::core)
pulsewise_add_test(configuration_model_test SOURCES configuration_model_test.cpp LIBS pulsewise::core)
pulsewise_add_test(modulator_test SOURCES modulator_test.cpp LIBS pulsewise::core)
pulsewise_add_test(simulation_test SOURCES simulation_test.cpp LIBS pulsewise::core)
pulsewise_add_test(waveform_test SOURCES waveform_test.cpp LIBS pulsewise::core)
pulsewise_add_test(ode_path_test SOURCES ode_path_test.cpp LIBS pulsewise::core)
