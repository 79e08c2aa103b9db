# Finds a Python interpreter that has NumPy, because the first python3 on PATH may be a
# separate installation without it (then FindPython3's NumPy component fails). Candidates, in
# order: Python3_EXECUTABLE if the user set it, python3 on PATH, /usr/bin/python3.
# Sets QAMSIGHT_PYTHON_EXECUTABLE and Python3_EXECUTABLE, or stops with a clear message.
if(QAMSIGHT_PYTHON_EXECUTABLE)
  return()
endif()
set(_qs_candidates)
if(Python3_EXECUTABLE)
  # An interpreter the user named is the only candidate: building against another one silently
  # would give a module that the named interpreter cannot import.
  execute_process(COMMAND ${Python3_EXECUTABLE} -c "import numpy"
                  RESULT_VARIABLE _qs_rc OUTPUT_QUIET ERROR_QUIET)
  if(NOT _qs_rc EQUAL 0)
    message(FATAL_ERROR "qamsight: the interpreter given by Python3_EXECUTABLE (${Python3_EXECUTABLE}) "
      "cannot import NumPy (or does not run). Install NumPy for it (Debian: python3-numpy), point "
      "-DPython3_EXECUTABLE at an interpreter that has NumPy, or configure with -DQAMSIGHT_PYTHON=OFF "
      "-DQAMSIGHT_TESTS=OFF.")
  endif()
  list(APPEND _qs_candidates ${Python3_EXECUTABLE})
endif()
find_program(_qs_path_python3 NAMES python3 NO_CACHE)
if(_qs_path_python3)
  list(APPEND _qs_candidates ${_qs_path_python3})
endif()
list(APPEND _qs_candidates /usr/bin/python3)
list(REMOVE_DUPLICATES _qs_candidates)
set(_qs_rejected "")
foreach(_qs_py IN LISTS _qs_candidates)
  if(NOT EXISTS ${_qs_py})
    continue()
  endif()
  execute_process(COMMAND ${_qs_py} -c "import numpy, sys; print(sys.version.split()[0], numpy.__version__)"
                  RESULT_VARIABLE _qs_rc OUTPUT_VARIABLE _qs_out ERROR_QUIET OUTPUT_STRIP_TRAILING_WHITESPACE)
  if(_qs_rc EQUAL 0)
    set(QAMSIGHT_PYTHON_EXECUTABLE ${_qs_py} CACHE FILEPATH "Python interpreter with NumPy used by qamsight" FORCE)
    set(Python3_EXECUTABLE ${_qs_py} CACHE FILEPATH "Python 3 interpreter" FORCE)
    message(STATUS "qamsight: using Python ${_qs_py} (Python, NumPy versions: ${_qs_out})")
    return()
  endif()
  string(APPEND _qs_rejected " ${_qs_py}")
endforeach()
message(FATAL_ERROR "qamsight: no Python interpreter with NumPy found (tried:${_qs_rejected}). "
  "Install Debian's python3-numpy (tools/setup/install-deps.sh does), pass "
  "-DPython3_EXECUTABLE=/path/to/python3 for an interpreter that has NumPy, or configure with "
  "-DQAMSIGHT_PYTHON=OFF -DQAMSIGHT_TESTS=OFF.")
