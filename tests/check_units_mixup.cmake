# Compile-fail check of core/include/loopsketch/base/units.h: the control source (like
# quantities, ohm * farad = seconds) must compile and the mix-up (ohms + farads) must not,
# and the compiler must refuse it at the sum (operator+), not for another reason.
# Arguments: -DCXX=<compiler> -DINCLUDE_DIR=<core/include> -DSOURCE_DIR=<tests/core/units_mixup>
foreach(var CXX INCLUDE_DIR SOURCE_DIR)
    if(NOT DEFINED ${var})
        message(FATAL_ERROR "check_units_mixup.cmake needs -D${var}=...")
    endif()
endforeach()

function(compile source result_var output_var)
    execute_process(
        COMMAND ${CXX} -std=c++20 -fsyntax-only -I${INCLUDE_DIR} ${SOURCE_DIR}/${source}
        RESULT_VARIABLE result OUTPUT_VARIABLE out ERROR_VARIABLE err)
    set(${result_var} ${result} PARENT_SCOPE)
    set(${output_var} "${out}${err}" PARENT_SCOPE)
endfunction()

compile(rc_time_compiles.cpp control_result control_output)
if(NOT control_result EQUAL 0)
    message(FATAL_ERROR "the control source does not compile, so the mix-up check proves "
        "nothing:\n${control_output}")
endif()
compile(ohms_plus_farads.cpp mixup_result mixup_output)
if(mixup_result EQUAL 0)
    message(FATAL_ERROR "ohms + farads compiled: units.h no longer rejects a unit mix-up")
endif()
if(NOT mixup_output MATCHES "operator\\+")
    message(FATAL_ERROR "ohms + farads failed to compile, but not at the sum:\n${mixup_output}")
endif()
message(STATUS "units.h: ohm * farad is a time; ohms + farads is refused at operator+")
