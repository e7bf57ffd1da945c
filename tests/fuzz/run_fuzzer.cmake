# Runs one fuzz target for SECONDS (cmake -P, from CTest) and prints libFuzzer's summary: the
# execution count ("Done N runs in S second(s)") and its final statistics; the whole log when
# the target fails (a crash, a violated invariant, a timeout), which fails the test.
# SPDX-License-Identifier: MIT
string(REPLACE "|" ";" seeds "${SEEDS}")
execute_process(
  COMMAND ${FUZZER} -max_total_time=${SECONDS} -max_len=${MAX_LEN} -timeout=30 -seed=${SEED}
          -print_final_stats=1 -artifact_prefix=${ARTIFACTS} ${CORPUS} ${seeds}
  RESULT_VARIABLE status
  OUTPUT_VARIABLE log
  ERROR_VARIABLE log)
if(NOT status EQUAL 0)
  message("${log}")
  message(FATAL_ERROR "${FUZZER} exited with ${status}; the input that failed is in "
                      "${ARTIFACTS}* (see DEVELOPERS.md to reproduce it)")
endif()
string(REGEX MATCHALL "(INFO: seed corpus[^\n]*|Done [0-9]+ runs[^\n]*|stat::[^\n]*)" summary
       "${log}")
list(JOIN summary "\n" summary)
message("${summary}")
