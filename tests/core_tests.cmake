# Suites of the core library, one per concept.
pulsewise_add_test(circuit_test SOURCES circuit_test.cpp LIBS pulsewise::core)
pulsewise_add_test(topology_test SOURCES topology_test.cpp LIBS pulsewise::core)
pulsewise_add_test(configuration_model_test SOURCES configuration_model_test.cpp LIBS pulsewise::core)
pulsewise_add_test(modulator_test SOURCES modulator_test.cpp LIBS pulsewise::core)
pulsewise_add_test(simulation_test SOURCES simulation_test.cpp LIBS pulsewise::core)
pulsewise_add_test(waveform_test SOURCES waveform_test.cpp LIBS pulsewise::core)
pulsewise_add_test(ode_path_test SOURCES ode_path_test.cpp LIBS pulsewise::core)

# The worked example of docs/worked-example.md runs and ends in DCM (K below K_crit, Erickson and
# Maksimovic, Fundamentals of Power Electronics, 2nd ed., ch. 5).
if(TARGET boost_worked_example)
  add_test(NAME WorkedExample.BoostRunsFiveHundredPeriodsAndEndsInDcm COMMAND boost_worked_example)
  set_tests_properties(WorkedExample.BoostRunsFiveHundredPeriodsAndEndsInDcm PROPERTIES
                       PASS_REGULAR_EXPRESSION "500 periods.*\nlast period: mode DCM")
endif()
pulsewise_add_test(line_frequency_test SOURCES line_frequency_test.cpp LIBS pulsewise::core)
pulsewise_add_test(taylor_piece_test SOURCES taylor_piece_test.cpp LIBS pulsewise::core)
pulsewise_add_test(period_replay_test SOURCES period_replay_test.cpp LIBS pulsewise::core)
pulsewise_add_test(piece_kernel_test SOURCES piece_kernel_test.cpp LIBS pulsewise::core)
pulsewise_add_test(piece_operators_test SOURCES piece_operators_test.cpp LIBS pulsewise::core)
