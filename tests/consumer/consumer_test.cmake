# Installs lotwise's development component into a fresh prefix, checks that the
# installed headers need only the standard library, then configures, builds and runs
# the outside program in tests/consumer against that prefix.
#
#   cmake -D BUILD_DIR=... -D CONSUMER_SOURCE_DIR=... -D WORK_DIR=... -D GENERATOR=...
#         [-D CXX_COMPILER=...] [-D CONFIG=...] -P consumer_test.cmake
foreach(var BUILD_DIR CONSUMER_SOURCE_DIR WORK_DIR GENERATOR)
  if(NOT DEFINED ${var})
    message(FATAL_ERROR "consumer_test.cmake needs -D ${var}=...")
  endif()
endforeach()

set(prefix "${WORK_DIR}/prefix")
set(consumer_build "${WORK_DIR}/build")
file(REMOVE_RECURSE "${WORK_DIR}")
file(MAKE_DIRECTORY "${WORK_DIR}")

function(run_step what)
  execute_process(COMMAND ${ARGN} RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE err)
  if(NOT rc EQUAL 0)
    message(FATAL_ERROR "${what} failed (${rc}):\n${out}\n${err}")
  endif()
  message(STATUS "${what}: ok")
  set(step_output "${out}" PARENT_SCOPE)
endfunction()

set(config_args)
if(CONFIG)
  set(config_args --config "${CONFIG}")
endif()

# 1. Install only what a C++ user of the library needs.
run_step("install the lotwise_development component"
  "${CMAKE_COMMAND}" --install "${BUILD_DIR}" --prefix "${prefix}"
  --component lotwise_development ${config_args})

file(GLOB_RECURSE config_files "${prefix}/*/lotwiseConfig.cmake")
file(GLOB_RECURSE libraries "${prefix}/*lotwise.a" "${prefix}/*lotwise.so" "${prefix}/*lotwise.lib"
     "${prefix}/*lotwise.dylib")
if(NOT config_files)
  message(FATAL_ERROR "no lotwiseConfig.cmake was installed under ${prefix}")
endif()
if(NOT libraries)
  message(FATAL_ERROR "the lotwise library itself was not installed under ${prefix}")
endif()

# 2. Public headers include only lotwise's own headers and standard-library headers
#    (angle brackets, no folder, no extension): no Eigen, Boost, toml++ or nlohmann/json.
file(GLOB_RECURSE headers "${prefix}/include/lotwise/*")
if(NOT headers)
  message(FATAL_ERROR "no public headers were installed under ${prefix}/include/lotwise")
endif()
foreach(header IN LISTS headers)
  file(STRINGS "${header}" includes REGEX "^[ \t]*#[ \t]*include")
  foreach(line IN LISTS includes)
    if(line MATCHES "#[ \t]*include[ \t]*\"lotwise/[A-Za-z0-9_]+\\.hpp\"")
      continue()
    endif()
    if(line MATCHES "#[ \t]*include[ \t]*<([a-z_]+)>")
      continue()
    endif()
    message(FATAL_ERROR "${header}: '${line}' is not a standard-library or lotwise header; "
                        "the installed headers must need nothing else")
  endforeach()
endforeach()

# 3. Configure, build and run the outside program against the installed package only.
set(compiler_args)
if(CXX_COMPILER)
  set(compiler_args "-DCMAKE_CXX_COMPILER=${CXX_COMPILER}")
endif()
set(build_type_args)
if(CONFIG)
  set(build_type_args "-DCMAKE_BUILD_TYPE=${CONFIG}")
endif()
run_step("configure the consumer"
  "${CMAKE_COMMAND}" -S "${CONSUMER_SOURCE_DIR}" -B "${consumer_build}" -G "${GENERATOR}"
  "-DCMAKE_PREFIX_PATH=${prefix}" ${compiler_args} ${build_type_args}
  # Only the prefix may provide lotwise: not a build tree in the user package registry.
  -DCMAKE_FIND_USE_PACKAGE_REGISTRY=OFF)

file(STRINGS "${consumer_build}/CMakeCache.txt" found_dir REGEX "^lotwise_DIR:")
string(FIND "${found_dir}" "${prefix}/" at)
if(NOT at GREATER -1)
  message(FATAL_ERROR "the consumer found lotwise outside the test prefix: ${found_dir}")
endif()

run_step("build the consumer" "${CMAKE_COMMAND}" --build "${consumer_build}" ${config_args})

file(GLOB_RECURSE programs "${consumer_build}/lotwise_consumer" "${consumer_build}/lotwise_consumer.exe")
list(FILTER programs EXCLUDE REGEX "CMakeFiles")
if(NOT programs)
  message(FATAL_ERROR "the consumer program was not built")
endif()
list(GET programs 0 program)
run_step("run the consumer" "${program}")
message(STATUS "${step_output}")
