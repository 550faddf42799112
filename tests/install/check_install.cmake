# Run by ctest (tests/install/CMakeLists.txt) with BUILD_DIR, SOURCE_DIR, WORK_DIR, KNEE,
# PYTHON (empty without the module), PYTHON_DIR, CXX and LAUNCHER set.
function(run)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE status OUTPUT_VARIABLE out ERROR_VARIABLE err)
  if(NOT status EQUAL 0)
    message(FATAL_ERROR "failed (${status}): ${ARGN}\n${out}\n${err}")
  endif()
  set(out "${out}" PARENT_SCOPE)
endfunction()

set(prefix ${WORK_DIR}/prefix)
file(REMOVE_RECURSE ${WORK_DIR})
run(${CMAKE_COMMAND} --install ${BUILD_DIR} --prefix ${prefix})
foreach(file include/knee/circuit.h include/knee/netlist.h include/knee/design_steps.h
             bin/knee)
  if(NOT EXISTS ${prefix}/${file})
    message(FATAL_ERROR "cmake --install did not install ${file}")
  endif()
endforeach()

set(netlist ${SOURCE_DIR}/netlists/bridge-rectifier.knee)
if(PYTHON)
  # The installed module, not the build tree's: PYTHONPATH names only the prefix.
  set(ENV{PYTHONPATH} ${prefix}/${PYTHON_DIR})
  # (Newlines, not semicolons, separate the statements: run() takes its arguments as a
  # CMake list.)
  run(${PYTHON} -c "import knee, sys\nprint(knee.__file__)\nprint(knee.load(sys.argv[1]).bias()['Rload.i'])"
      ${netlist})
  if(NOT out MATCHES "^${prefix}/")
    message(FATAL_ERROR "the module imported from elsewhere than the prefix: ${out}")
  endif()
  message(STATUS "installed module: ${out}")
endif()

set(launcher "")
if(LAUNCHER)
  set(launcher -DCMAKE_CXX_COMPILER_LAUNCHER=${LAUNCHER})
endif()
run(${CMAKE_COMMAND} -S ${SOURCE_DIR}/examples/sweep-bridge -B ${WORK_DIR}/example
    -DCMAKE_PREFIX_PATH=${prefix} -DCMAKE_BUILD_TYPE=Release -DCMAKE_CXX_COMPILER=${CXX}
    ${launcher})
run(${CMAKE_COMMAND} --build ${WORK_DIR}/example)
run(${WORK_DIR}/example/sweep_bridge ${netlist} Vin -20..20:0.5 "(out.v - ret.v)")
set(example "${out}")

# The same sweep by the knee command: its CSV without the header and with only the first
# two columns (the CSV adds the stress columns of rated diodes).
run(${KNEE} sweep ${netlist} Vin=-20..20:0.5 --show "(out.v - ret.v)" --format csv --quiet)
string(FIND "${out}" "\n" header_end)  # (REGEX REPLACE would apply a ^ at every line)
math(EXPR rows_start "${header_end} + 1")
string(SUBSTRING "${out}" ${rows_start} -1 cli)
string(REGEX REPLACE "([^,\n]*,[^,\n]*)[^\n]*" "\\1" cli "${cli}")
if(NOT example STREQUAL cli)
  message(FATAL_ERROR "the example's numbers differ from knee sweep's:\n${example}\n---\n${cli}")
endif()
string(REGEX MATCHALL "\n" lines "${example}")
list(LENGTH lines count)
if(NOT count EQUAL 81)
  message(FATAL_ERROR "expected 81 points from the example, got ${count}")
endif()
message(STATUS "example consumer: ${count} points equal to knee sweep's")
