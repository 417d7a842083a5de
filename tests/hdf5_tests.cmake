# Suites of the HDF5 trace recorder and reader (pulsewise::hdf5).
if(NOT TARGET pulsewise::hdf5)
  return()
endif()

# The tests write HDF5 files that are not traces (to check that the reader rejects them).
enable_language(C)
find_package(HDF5 REQUIRED COMPONENTS C CXX)

# Records a long run and reports its flushes: the kill test and the memory measurement use it.
add_executable(trace_record_helper tools/trace_record_helper.cpp)
target_include_directories(trace_record_helper PRIVATE ${CMAKE_CURRENT_SOURCE_DIR}/tools)
target_link_libraries(trace_record_helper PRIVATE pulsewise::hdf5 pulsewise_warnings)

set(PULSEWISE_TEST_PYTHON /usr/bin/python3 CACHE FILEPATH "Python with h5py for the trace checks")

pulsewise_add_test(hdf5_recorder_test SOURCES hdf5_recorder_test.cpp
                   LIBS pulsewise::hdf5 hdf5::hdf5_cpp hdf5::hdf5)
target_include_directories(hdf5_recorder_test PRIVATE ${CMAKE_CURRENT_SOURCE_DIR}/tools)
add_dependencies(hdf5_recorder_test trace_record_helper)
target_compile_definitions(hdf5_recorder_test PRIVATE
  PULSEWISE_TRACE_HELPER="$<TARGET_FILE:trace_record_helper>"
  PULSEWISE_TEST_PYTHON="${PULSEWISE_TEST_PYTHON}")

pulsewise_add_test(trace_file_test SOURCES trace_file_test.cpp
                   LIBS pulsewise::hdf5 hdf5::hdf5_cpp hdf5::hdf5)
target_include_directories(trace_file_test PRIVATE ${CMAKE_CURRENT_SOURCE_DIR}/tools)
