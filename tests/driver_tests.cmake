# End-to-end tests of the `pulsewise` driver binary, and tests of the closed-form formulas that
# `pulsewise verify` compares with (apps/verify.hpp).
if(TARGET pulsewise_driver)
  find_package(nlohmann_json 3.9 REQUIRED)
  pulsewise_add_test(driver_test SOURCES driver_test.cpp
                     LIBS pulsewise_verify nlohmann_json::nlohmann_json)
  target_compile_definitions(driver_test PRIVATE
    PULSEWISE_DRIVER_PATH="$<TARGET_FILE:pulsewise_driver>"
    PULSEWISE_PYTHON="/usr/bin/python3")
  add_dependencies(driver_test pulsewise_driver)
endif()

# The whole closed-form grid of `pulsewise verify` (36 points: buck, boost, buck-boost, CCM and
# DCM; Erickson & Maksimovic, Fundamentals of Power Electronics, 2nd ed., ch. 2 and 5): exit 0
# only if every row is within its tolerance.
if(TARGET pulsewise_driver)
  add_test(NAME DriverVerify.FullGridAgreesWithTheClosedForms
           COMMAND pulsewise_driver verify --quiet)
  set_tests_properties(DriverVerify.FullGridAgreesWithTheClosedForms PROPERTIES TIMEOUT 900)
endif()
