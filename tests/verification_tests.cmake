# Verification suites of the core engine: closed-form converter results and analytic circuits
# (issue 2, "How it is checked").
pulsewise_add_test(closed_form_test SOURCES closed_form_test.cpp LIBS pulsewise::core)
pulsewise_add_test(analytic_circuit_test SOURCES analytic_circuit_test.cpp LIBS pulsewise::core)
