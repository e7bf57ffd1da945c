# qualify: tests of the qualify command on files this script writes (verdicts, JSON, labels, errors).
# SPDX-License-Identifier: MIT
#
# cmake -DQUALIFY=<the qualify binary> -DGROUP=<verdicts|json|labels|errors|usage|mfcq|lp|slater|
#       kkt|sparse|faults> [-DSPQR=<ON when qualify was built with SPQR>]
#       -DWORK_DIR=<scratch folder> -DVERSION=<project version> [-DJQ=<jq>] -P cli_test.cmake
# Every check runs the binary and compares its exit status exactly, so a crash (a signal name
# instead of a number) fails. JSON is parsed with string(JSON) and, when jq is found, also by
# jq (a strict parser: string(JSON) accepts trailing commas and text after the object).
cmake_minimum_required(VERSION 3.19)

foreach(var QUALIFY GROUP WORK_DIR VERSION)
  if(NOT DEFINED ${var})
    message(FATAL_ERROR "cli_test.cmake needs -D${var}=...")
  endif()
endforeach()
get_filename_component(QUALIFY "${QUALIFY}" ABSOLUTE)
file(REMOVE_RECURSE "${WORK_DIR}")
file(MAKE_DIRECTORY "${WORK_DIR}")
set_property(GLOBAL PROPERTY cli_failures "")
set_property(GLOBAL PROPERTY cli_checks 0)

# ---- helpers -------------------------------------------------------------------------------

function(write name text)
  file(WRITE "${WORK_DIR}/${name}" "${text}")
endfunction()

# A Matrix Market coordinate file: write_mtx(NAME ROWS COLS "i j v" ...), 1-based entries.
function(write_mtx name rows cols)
  list(LENGTH ARGN n)
  set(text "%%MatrixMarket matrix coordinate real general\n${rows} ${cols} ${n}\n")
  foreach(entry IN LISTS ARGN)
    string(APPEND text "${entry}\n")
  endforeach()
  write("${name}" "${text}")
endfunction()

# run(ARGS...): runs qualify in WORK_DIR; sets rc, out, err and cmd in the caller.
# run(INPUT FILE ARGS...): standard input from FILE. RUN_AS, when set, is a command prefix
# (another user).
function(run)
  cmake_parse_arguments(RUN "" "INPUT" "" ${ARGN})
  set(input)
  if(RUN_INPUT)
    set(input INPUT_FILE "${WORK_DIR}/${RUN_INPUT}")
  endif()
  execute_process(COMMAND ${RUN_AS} "${QUALIFY}" ${RUN_UNPARSED_ARGUMENTS} WORKING_DIRECTORY "${WORK_DIR}"
                  ${input} RESULT_VARIABLE result OUTPUT_VARIABLE stdout ERROR_VARIABLE stderr)
  string(REPLACE ";" " " shown "${RUN_UNPARSED_ARGUMENTS}")
  set(rc "${result}" PARENT_SCOPE)
  set(out "${stdout}" PARENT_SCOPE)
  set(err "${stderr}" PARENT_SCOPE)
  set(cmd "qualify ${shown}" PARENT_SCOPE)
endfunction()

function(fail what)
  set_property(GLOBAL APPEND_STRING PROPERTY cli_failures
               "FAILED ${cmd}: ${what}\n  exit: ${rc}\n  stdout: ${out}\n  stderr: ${err}\n")
endfunction()

function(count_check)
  get_property(n GLOBAL PROPERTY cli_checks)
  math(EXPR n "${n} + 1")
  set_property(GLOBAL PROPERTY cli_checks ${n})
endfunction()

function(expect_rc expected)
  count_check()
  if(NOT "${rc}" STREQUAL "${expected}")
    fail("exit status ${rc}, expected ${expected}")
  endif()
endfunction()

# expect_in(VAR TEXT): the variable (out or err) holds TEXT.
function(expect_in var text)
  count_check()
  string(FIND "${${var}}" "${text}" at)
  if(at EQUAL -1)
    fail("${var} lacks '${text}'")
  endif()
endfunction()

function(expect_not_in var text)
  count_check()
  string(FIND "${${var}}" "${text}" at)
  if(NOT at EQUAL -1)
    fail("${var} holds '${text}'")
  endif()
endfunction()

# expect_json(): stdout is exactly one JSON object on one line (jq confirms when present).
function(expect_json)
  count_check()
  string(JSON type ERROR_VARIABLE problem TYPE "${out}")
  if(NOT type STREQUAL "OBJECT")
    fail("stdout is not a JSON object (${problem})")
    return()
  endif()
  if(NOT out MATCHES "^{[^\n]*}\n$")
    fail("stdout is not one line holding one object")
  endif()
  if(JQ)
    file(WRITE "${WORK_DIR}/last_stdout.json" "${out}")
    execute_process(COMMAND "${JQ}" -s length "${WORK_DIR}/last_stdout.json"
                    RESULT_VARIABLE jq_rc OUTPUT_VARIABLE jq_out ERROR_VARIABLE jq_err
                    OUTPUT_STRIP_TRAILING_WHITESPACE)
    if(NOT jq_rc EQUAL 0 OR NOT jq_out STREQUAL "1")
      fail("jq does not read exactly one JSON value: ${jq_err}${jq_out}")
    endif()
  endif()
endfunction()

# expect_key(EXPECTED KEY...): the JSON value at the path KEY... of stdout is EXPECTED.
function(expect_key expected)
  count_check()
  string(JSON value ERROR_VARIABLE problem GET "${out}" ${ARGN})
  if(problem)
    fail("JSON has no ${ARGN}: ${problem}")
  elseif(NOT "${value}" STREQUAL "${expected}")
    fail("JSON ${ARGN} is '${value}', expected '${expected}'")
  endif()
endfunction()

function(expect_type expected)
  count_check()
  string(JSON value ERROR_VARIABLE problem TYPE "${out}" ${ARGN})
  if(NOT "${value}" STREQUAL "${expected}")
    fail("JSON ${ARGN} has type '${value}', expected ${expected} ${problem}")
  endif()
endfunction()

function(expect_length expected)
  count_check()
  string(JSON value ERROR_VARIABLE problem LENGTH "${out}" ${ARGN})
  if(problem)
    fail("JSON has no array ${ARGN}: ${problem}")
  elseif(NOT "${value}" STREQUAL "${expected}")
    fail("JSON ${ARGN} has length ${value}, expected ${expected}")
  endif()
endfunction()

# expect_error(CODE FILE [LINE]): exit CODE, stderr names FILE (and "line LINE"); run again
# with --json, stdout is the error object with the same facts.
function(expect_error code file)
  set(line "${ARGN}")
  expect_rc(${code})
  expect_in(err "'${file}'")
  if(NOT line STREQUAL "")
    expect_in(err "line ${line}:")
  endif()
  expect_not_in(out "LICQ")  # no report on an error
  list(APPEND last_args --json)
  run(${last_args})
  expect_rc(${code})
  expect_json()
  expect_key(1 schema_version)
  expect_key(invalid_input verdict)
  expect_key(${code} exit_code)
  expect_key("${file}" file)
  string(JSON message ERROR_VARIABLE problem GET "${out}" error)
  string(FIND "${message}" "'${file}'" at)
  count_check()
  if(at EQUAL -1)
    fail("the JSON error does not name '${file}'")
  endif()
  if(NOT line STREQUAL "")
    expect_key(${line} line)
  endif()
endfunction()

# A run whose arguments expect_error can repeat with --json.
macro(run_args)
  set(last_args ${ARGN})
  run(${ARGN})
endmacro()

# ---- inputs --------------------------------------------------------------------------------

# Hand-checkable: the rows of the identity are orthonormal, rank 3.
write_mtx(identity.mtx 3 3 "1 1 1" "2 2 1" "3 3 1")
# H. W. Kuhn and A. W. Tucker, "Nonlinear programming", Proc. Second Berkeley Symposium on
# Mathematical Statistics and Probability, 1951: min -x1 s.t. x2 - (1 - x1)^3 <= 0, -x2 <= 0.
# At the minimiser (1, 0) both are active with gradients (0, 3(1 - x1)^2 * 0 + 1) = (0, 1) and
# (0, -1): opposed rows, rank 1 (hand-checked).
write_mtx(cusp.mtx 2 2 "1 2 1" "2 2 -1")
# Hand-checkable: row 3 repeats row 2, so the rank is 2 and rows 1, 2 (0-based) are duplicates.
write_mtx(duplicate.mtx 3 3 "1 1 1" "2 2 1" "2 3 1" "3 2 1" "3 3 1")
# H. Scheel and S. Scholtes, "Mathematical programs with complementarity constraints",
# Math. Oper. Res. 25, 2000: -x1 <= 0, -x2 <= 0, x1 x2 <= 0 at (0, 0) has gradients (-1, 0),
# (0, -1) and (x2, x1) = (0, 0): a zero row, rank 2 of 3 (hand-checked).
write_mtx(complementarity.mtx 3 2 "1 1 -1" "2 2 -1")
# Hand-checked: rows (1, 0) and (1, t), t = 2e-6, as an 'array' file (column by column). For
# unit rows at angle theta the singular values are sqrt(1 +- cos theta), so sigma_min is
# t / sqrt(2) = 1.41e-6 to first order: holds at the automatic tau (~4.4e-16), undecided at
# --tol 1e-6 (within the band of 10 around tau), fails at --tol 1e-4.
write(near.mtx "%%MatrixMarket matrix array real general\n2 2\n1\n1\n0\n2e-6\n")
write(cusp.labels "cusp\nx2_nonneg\n\n\n")

# ---- groups --------------------------------------------------------------------------------

if(GROUP STREQUAL "verdicts")
  run(licq identity.mtx)
  expect_rc(0)
  expect_in(out "LICQ holds")
  expect_in(out "rank         3 on unit gradients")

  run(licq cusp.mtx)
  expect_rc(1)
  expect_in(out "LICQ fails: rank 1 of 2")
  expect_in(out "opposed_rows")
  expect_in(out "row 1 is opposed to row 0 (ratio -1)")

  run(licq duplicate.mtx)
  expect_rc(1)
  expect_in(out "LICQ fails: rank 2 of 3")
  expect_in(out "row 2 is a duplicate of row 1")

  run(licq complementarity.mtx)
  expect_rc(1)
  expect_in(out "LICQ fails: rank 2 of 3")
  expect_in(out "zero_gradient")
  expect_in(out "more_rows_than_variables")

  run(licq near.mtx)
  expect_rc(0)
  run(licq near.mtx --tol 1e-6)
  expect_rc(2)
  expect_in(out "LICQ undecided")
  expect_in(out "threshold    1e-06 relative (given)")
  run(licq near.mtx --tol=1e-4)
  expect_rc(1)

  # Standard input, options before the operand.
  run(INPUT cusp.mtx licq --tol 1e-9 -)
  expect_rc(1)
  expect_in(out "LICQ fails: rank 1 of 2")

  # No active constraint: nothing to be dependent (hand-checkable).
  write(none.mtx "%%MatrixMarket matrix coordinate real general\n0 4 0\n")
  run(licq none.mtx)
  expect_rc(0)
  expect_in(out "no active constraint")

elseif(GROUP STREQUAL "json")
  run(licq identity.mtx --json)
  expect_rc(0)
  expect_json()
  expect_key(1 schema_version)
  expect_key(licq check)
  expect_key(holds verdict)
  expect_key(3 rank)
  expect_key(3 rows)
  expect_key(3 cols)
  expect_length(0 dependent_rows)
  if(NOT err STREQUAL "")
    fail("stderr is not empty on success")
  endif()

  run(licq --json cusp.mtx)
  expect_rc(1)
  expect_json()
  expect_key(fails verdict)
  expect_key(1 rank)
  expect_key(2 rows)
  expect_key(2 cols)
  expect_length(1 dependent_rows)
  expect_key(0 opposed_rows 0 first)
  expect_key(1 opposed_rows 0 second)
  expect_key(-1 opposed_rows 0 ratio)

  run(licq duplicate.mtx --json)
  expect_rc(1)
  expect_json()
  expect_key(2 rank)
  expect_length(1 dependent_rows)
  expect_key(1 duplicate_rows 0 first)
  expect_key(2 duplicate_rows 0 second)

  run(licq complementarity.mtx --json)
  expect_rc(1)
  expect_json()
  expect_key(2 zero_rows 0)
  expect_key(2 dependent_rows 0)

  run(licq near.mtx --tol 1e-6 --json)
  expect_rc(2)
  expect_json()
  expect_key(undecided verdict)
  expect_key(2 rank)
  expect_type(NUMBER relative_threshold_requested)
  expect_length(0 dependent_rows)

  # Errors of every kind print the error object (checked in detail by the errors group).
  run(licq missing.mtx --json)
  expect_rc(66)
  expect_json()
  expect_key(invalid_input verdict)
  run(licq identity.mtx --tol 7 --json)
  expect_rc(64)
  expect_json()
  expect_key(invalid_input verdict)
  expect_key(64 exit_code)
  run(frobnicate --json)
  expect_rc(64)
  expect_json()

elseif(GROUP STREQUAL "labels")
  run(licq cusp.mtx --labels cusp.labels)
  expect_rc(1)
  expect_in(out "independent  cusp")
  expect_in(out "dependent    x2_nonneg")
  expect_in(out "x2_nonneg is opposed to cusp (ratio -1)")
  expect_not_in(out "row 0")

  run(licq cusp.mtx --labels=cusp.labels --json)
  expect_rc(1)
  expect_json()
  expect_key(cusp labels 0)
  expect_key(x2_nonneg labels 1)
  expect_key(x2_nonneg dependencies 0 label)
  expect_in(out "\"labels\":[\"cusp\",\"x2_nonneg\"]")

  # Windows line ends, blanks around labels, a byte-order mark and UTF-8 are taken.
  string(ASCII 239 187 191 bom)
  write(crlf.labels "${bom}  réservoir \r\n\tpump\r\n\r\n")
  run(licq cusp.mtx --labels crlf.labels)
  expect_rc(1)
  expect_in(out "pump is opposed to réservoir")

  # A count that differs names both counts.
  write(three.labels "a\nb\nc\n")
  run_args(licq cusp.mtx --labels three.labels)
  expect_error(65 three.labels 3)
  expect_in(err "3 labels for the 2 rows of 'cusp.mtx'")
  write(one.labels "a\n\n")
  run_args(licq cusp.mtx --labels one.labels)
  expect_error(65 one.labels 1)
  expect_in(err "1 label for the 2 rows of 'cusp.mtx'")
  write(empty.labels "")
  run_args(licq cusp.mtx --labels empty.labels)
  expect_error(65 empty.labels)
  expect_in(err "0 labels for the 2 rows")

  # Bad content, by line.
  write(gap.labels "a\n\nb\n")
  run_args(licq cusp.mtx --labels gap.labels)
  expect_error(65 gap.labels 2)
  write(twice.labels "a\na\n")
  run_args(licq cusp.mtx --labels twice.labels)
  expect_error(65 twice.labels 2)
  expect_in(err "already on line 1")
  string(ASCII 1 control)
  write(control.labels "a\nb${control}\n")
  run_args(licq cusp.mtx --labels control.labels)
  expect_error(65 control.labels 2)
  string(ASCII 233 e_acute_latin1)
  write(latin1.labels "caf${e_acute_latin1}\nb\n")
  run_args(licq cusp.mtx --labels latin1.labels)
  expect_error(65 latin1.labels 1)
  expect_in(err "not valid UTF-8")
  string(REPEAT "x" 5000 long)
  write(long.labels "a\n${long}\n")
  run_args(licq cusp.mtx --labels long.labels)
  expect_error(65 long.labels 2)

  # Cannot open: missing, or a folder.
  run_args(licq cusp.mtx --labels missing.labels)
  expect_error(66 missing.labels)
  file(MAKE_DIRECTORY "${WORK_DIR}/folder.labels")
  run_args(licq cusp.mtx --labels folder.labels)
  expect_error(66 folder.labels)

elseif(GROUP STREQUAL "errors")
  run_args(licq missing.mtx)
  expect_error(66 missing.mtx)
  file(MAKE_DIRECTORY "${WORK_DIR}/folder.mtx")
  run_args(licq folder.mtx)
  expect_error(66 folder.mtx)

  write_mtx(garbled.mtx 2 2 "1 2 1" "2 2 -1.0e+0x")
  run_args(licq garbled.mtx)
  expect_error(65 garbled.mtx 4)
  expect_in(err "is not a number")

  # Truncated: an entry missing, and a file cut inside an entry line.
  write(short.mtx "%%MatrixMarket matrix coordinate real general\n2 2 3\n1 2 1\n2 2 -1\n")
  run_args(licq short.mtx)
  expect_error(65 short.mtx 4)
  expect_in(err "ends after 2 of the 3 entries")
  write(cut.mtx "%%MatrixMarket matrix coordinate real general\n2 2 2\n1 2 1\n2 2")
  run_args(licq cut.mtx)
  expect_error(65 cut.mtx 4)
  write(empty.mtx "")
  run_args(licq empty.mtx)
  expect_error(65 empty.mtx 1)

  write_mtx(range.mtx 2 2 "1 2 1" "3 2 -1")
  run_args(licq range.mtx)
  expect_error(65 range.mtx 4)
  expect_in(err "out of range 1..2")

  write_mtx(nan.mtx 2 2 "1 2 nan" "2 2 -1")
  run_args(licq nan.mtx)
  expect_error(65 nan.mtx 3)
  expect_in(err "NaN")
  write_mtx(inf.mtx 2 2 "1 2 1" "2 2 -inf")
  run_args(licq inf.mtx)
  expect_error(65 inf.mtx 4)

  write(symmetric.mtx "%%MatrixMarket matrix coordinate real symmetric\n2 2 1\n1 1 1\n")
  run_args(licq symmetric.mtx)
  expect_error(65 symmetric.mtx 1)
  expect_in(err "symmetric")

  write(text.mtx "hello, world\n")
  run_args(licq text.mtx)
  expect_error(65 text.mtx 1)

  # The check refuses it (invalid_input): a Jacobian without variables.
  write(no_columns.mtx "%%MatrixMarket matrix coordinate real general\n2 0 0\n")
  run_args(licq no_columns.mtx)
  expect_error(65 no_columns.mtx)
  expect_in(err "no columns")


elseif(GROUP STREQUAL "usage")
  run()
  expect_rc(64)
  expect_in(err "Usage: qualify COMMAND")
  run(--help)
  expect_rc(0)
  expect_in(out "Usage: qualify COMMAND")
  expect_in(out "licq")
  run(licq --help)
  expect_rc(0)
  expect_in(out "Usage: qualify licq FILE.mtx [--labels FILE] [--tol X] [--json]")
  expect_in(out "\"verdict\":\"invalid_input\"")
  run(licq -h)
  expect_rc(0)
  run(--version)
  expect_rc(0)
  if(NOT out STREQUAL "qualify ${VERSION}\n")
    fail("--version prints '${out}', expected 'qualify ${VERSION}'")
  endif()

  run(licq)
  expect_rc(64)
  expect_in(err "missing FILE.mtx argument")
  run(licq identity.mtx --frobnicate)
  expect_rc(64)
  expect_in(err "unknown option '--frobnicate'")
  run(licq identity.mtx extra.mtx)
  expect_rc(64)
  run(licq identity.mtx --tol)
  expect_rc(64)
  run(licq identity.mtx --tol 1e-8 --tol 1e-8)
  expect_rc(64)
  run(licq identity.mtx --json=yes)
  expect_rc(64)
  run(frobnicate identity.mtx)
  expect_rc(64)
  expect_in(err "unknown command 'frobnicate'")
  run(--frobnicate)
  expect_rc(64)
  # --tol must parse fully as a finite number in (0, 1).
  foreach(bad --tol=abc --tol=0 --tol=1 --tol=2 --tol=-0.5 --tol=nan --tol=inf --tol=1e-8x
          --tol= "--tol= 1e-8" --tol=0x1p-3 --tol=1e-400)
    run(licq identity.mtx "${bad}")
    expect_rc(64)
    expect_in(err "--tol must be a finite number in (0, 1)")
  endforeach()
  run(licq identity.mtx --tol 0.05)  # sigma_min 1 >= band 10 * 0.05: holds
  expect_rc(0)
  # Usage errors come before files are read: a missing file with a bad option is a usage error.
  run(licq missing.mtx --tol 0)
  expect_rc(64)

elseif(GROUP STREQUAL "mfcq")
  # Three lines through a point, -x1 <= 0, -x2 <= 0, -x1 - x2 <= 0 at 0: LICQ fails (three
  # gradients in the plane), MFCQ holds with d = (1, 1) and t* = 1, the LP's cap (hand-checked).
  write_mtx(fan.mtx 3 2 "1 1 -1" "2 2 -1" "3 1 -1" "3 2 -1")
  run(mfcq --ineq fan.mtx)
  expect_rc(0)
  expect_in(out "MFCQ holds")
  expect_in(out "LICQ fails: multipliers are bounded but need not be unique")
  expect_in(out "mfcq_without_licq")
  run(mfcq --ineq fan.mtx --json)
  expect_rc(0)
  expect_json()
  expect_key(mfcq check)
  expect_key(holds verdict)
  expect_key(1 deciding_value)  # the direction's margin, checked directly: d = (1, 1)
  expect_type(NUMBER margin)    # t* as the LP returns it (1 to the LP's accuracy)
  expect_key(fails licq verdict)

  # The Kuhn-Tucker cusp (cusp.mtx, above): MFCQ fails, lambda = (1/2, 1/2) on both rows.
  run(mfcq --ineq cusp.mtx --labels cusp.labels)
  expect_rc(1)
  expect_in(out "MFCQ fails: the active gradients are positively dependent")
  expect_in(out "lambda > 0   cusp, x2_nonneg")
  run(mfcq --ineq=cusp.mtx --json)
  expect_rc(1)
  expect_json()
  expect_key(fails verdict)
  expect_key(positive_dependence certificate kind)
  expect_key(0 certificate ineq_rows 0)
  expect_key(1 certificate ineq_rows 1)
  expect_length(0 certificate eq_rows)
  expect_type(NUMBER certificate residual)
  expect_key(0.5 certificate lambda 0)

  # Scheel and Scholtes (Math. Oper. Res. 25, 2000), complementarity at (0, 0): zero gradient.
  run(mfcq --ineq complementarity.mtx --json)
  expect_rc(1)
  expect_key(2 certificate ineq_rows 0)

  # An equality duplicated (hand-checkable): E = [(0, 1), (0, 1)] has rank 1.
  write_mtx(one_ineq.mtx 1 2 "1 1 1")
  write_mtx(eq_twice.mtx 2 2 "1 2 1" "2 2 1")
  run(mfcq --ineq one_ineq.mtx --eq eq_twice.mtx --json)
  expect_rc(1)
  expect_json()
  expect_key(equality_dependence certificate kind)
  expect_length(0 certificate ineq_rows)
  expect_length(2 certificate eq_rows)
  expect_key(1 equality_licq rank)
  run(mfcq --ineq one_ineq.mtx --eq eq_twice.mtx)
  expect_in(out "equality_rank_deficient")

  # Equalities with a consistent inequality: -x1 <= 0 with x2 = 0 holds (d = (1, 0)).
  write_mtx(eq_one.mtx 1 2 "1 2 1")
  write_mtx(minus_x1.mtx 1 2 "1 1 -1")
  run(mfcq --ineq minus_x1.mtx --eq eq_one.mtx)
  expect_rc(0)
  run(INPUT eq_one.mtx mfcq --ineq minus_x1.mtx --eq -)
  expect_rc(0)

  # No rows at all: holds vacuously.
  write(none2.mtx "%%MatrixMarket matrix coordinate real general\n0 2 0\n")
  run(mfcq --ineq none2.mtx)
  expect_rc(0)
  expect_in(out "vacuously")

  # Nearly opposed rows (1, 0) and (-1, -1e-5): t* is about 5e-6 (hand-checked: s / 2);
  # holds at the default tau 1e-7, undecided at 1e-6 (band 10), fails at 1e-4.
  write_mtx(pinch.mtx 2 2 "1 1 1" "2 1 -1" "2 2 -1e-5")
  run(mfcq --ineq pinch.mtx)
  expect_rc(0)
  run(mfcq --ineq pinch.mtx --tol 1e-6)
  expect_rc(2)
  expect_in(out "MFCQ undecided")
  run(mfcq --ineq pinch.mtx --tol 1e-4 --json)
  expect_rc(1)
  expect_json()
  expect_type(NUMBER relative_threshold_requested)

  # Errors: counts that disagree, labels of the wrong length, files, usage.
  write_mtx(three_cols.mtx 1 3 "1 3 1")
  run_args(mfcq --ineq cusp.mtx --eq three_cols.mtx)
  expect_error(65 three_cols.mtx)
  expect_in(err "2 columns, the equality Jacobian 3")
  run_args(mfcq --ineq cusp.mtx --eq eq_one.mtx --labels cusp.labels)
  expect_error(65 cusp.labels)
  expect_in(err "2 labels for the 3 rows of 'cusp.mtx' and 'eq_one.mtx'")
  run_args(mfcq --ineq missing.mtx)
  expect_error(66 missing.mtx)
  write_mtx(nan.mtx 2 2 "1 2 nan" "2 2 -1")
  run_args(mfcq --ineq cusp.mtx --eq nan.mtx)
  expect_error(65 nan.mtx 3)
  run(mfcq)
  expect_rc(64)
  expect_in(err "missing --ineq A.mtx")
  run(mfcq --ineq cusp.mtx --tol 0)
  expect_rc(64)
  run(mfcq --ineq - --eq -)
  expect_rc(64)
  run(mfcq --help)
  expect_rc(0)
  expect_in(out "Usage: qualify mfcq --ineq A.mtx [--eq E.mtx] [--labels FILE] [--tol X] [--json]")
  run(--help)
  expect_in(out "mfcq")
elseif(GROUP STREQUAL "sparse")
  # Coordinate files are held sparse and checked by the sparse path (SPQR when the build found
  # it, SPQR=ON; otherwise the dense core up to licq_options::sparse_dense_limit, 2^24
  # entries); array files by the dense path. The same matrix gives the same answers both ways.
  write(duplicate_array.mtx
        "%%MatrixMarket matrix array real general\n3 3\n1\n0\n0\n0\n1\n1\n0\n1\n1\n")
  foreach(file duplicate.mtx duplicate_array.mtx)
    run(licq ${file} --json)
    expect_rc(1)
    expect_json()
    expect_key(2 rank)
    expect_key(2 dependent_rows 0)
    expect_key(1 duplicate_rows 0 first)
  endforeach()
  run(licq duplicate.mtx --json)
  if(SPQR)
    expect_key(sparse_qr method)
  else()
    expect_in(out "dense_fallback")
  endif()

  # A coordinate file is checked sparse whatever its announced size: 10^10 entries would not
  # fit the dense path. Two unit rows and 99998 zero rows fail with SPQR; without it the
  # check is undecided and says why.
  write_mtx(huge.mtx 100000 100000 "1 1 1" "2 2 1")
  run(licq huge.mtx)
  if(SPQR)
    expect_rc(1)
    expect_in(out "zero_gradient")
    expect_in(out "LICQ fails: rank 2 of 100000")
  else()
    expect_rc(2)
    expect_in(out "no_sparse_engine")
  endif()

  # A banded Jacobian beyond the dense core's 2^24 entries: the dynamics of a double
  # integrator x_{k+1} = x_k + u_k over 4000 stages (rows -x_k + x_{k+1} - u_k, variables
  # x_0, u_0, x_1, ...; 4000 x 8001 = 3.2e7 entries), plus a path constraint that repeats
  # the dynamics of stage 1234 scaled by -2: rank 4000 of 4001, the last row opposed to row
  # 1234 (hand-checkable).
  set(entries)
  foreach(k RANGE 0 3999)
    math(EXPR row "${k} + 1")
    math(EXPR x "2 * ${k} + 1")
    math(EXPR u "2 * ${k} + 2")
    math(EXPR next "2 * ${k} + 3")
    list(APPEND entries "${row} ${x} -1" "${row} ${next} 1" "${row} ${u} -1")
  endforeach()
  list(APPEND entries "4001 2469 2" "4001 2471 -2" "4001 2470 2")
  write_mtx(banded.mtx 4001 8001 ${entries})
  run(licq banded.mtx --json)
  if(SPQR)
    expect_rc(1)
    expect_json()
    expect_key(4000 rank)
    expect_length(1 dependent_rows)
    expect_key(1234 opposed_rows 0 first)
    expect_key(4000 opposed_rows 0 second)
    expect_key(-2 opposed_rows 0 ratio)
  else()
    expect_rc(2)
    expect_in(out "no_sparse_engine")
  endif()

  # MFCQ: when either file is in coordinate form both are checked sparse; two array files
  # dense. The cusp (above) and the duplicated equality give the same certificate each way.
  write(cusp_array.mtx "%%MatrixMarket matrix array real general\n2 2\n0\n0\n1\n-1\n")
  foreach(file cusp.mtx cusp_array.mtx)
    run(mfcq --ineq ${file} --json)
    expect_rc(1)
    expect_key(positive_dependence certificate kind)
    expect_key(0.5 certificate lambda 1)
  endforeach()
  write(one_ineq_array.mtx "%%MatrixMarket matrix array real general\n1 2\n1\n0\n")
  write_mtx(eq_twice.mtx 2 2 "1 2 1" "2 2 1")
  run(mfcq --ineq one_ineq_array.mtx --eq eq_twice.mtx --json)
  expect_rc(1)
  expect_key(equality_dependence certificate kind)
  expect_key(1 equality_licq rank)
  if(SPQR)
    expect_key(sparse_qr equality_licq method)
  endif()

  # The banded dynamics as equalities and bounds u_k <= 1 active at every 100th stage: a
  # direction exists (lower the controls, let the states follow), t* > 0; adding -u_100 <= 0
  # opposes the bound of stage 100, a positive dependence of the two (hand-checkable).
  set(bounds)
  set(count 0)
  foreach(k RANGE 0 3999 100)
    math(EXPR count "${count} + 1")
    math(EXPR u "2 * ${k} + 2")
    list(APPEND bounds "${count} ${u} 1")
  endforeach()
  list(REMOVE_AT entries -1 -2 -3)  # the dynamics only
  write_mtx(dynamics.mtx 4000 8001 ${entries})
  write_mtx(bounds.mtx ${count} 8001 ${bounds})
  run(mfcq --ineq bounds.mtx --eq dynamics.mtx --json)
  if(SPQR)
    expect_rc(0)
    expect_key(holds verdict)
  else()
    expect_rc(2)  # the rank of the 4000 x 8001 equalities needs SPQR
  endif()
  math(EXPR opposed "${count} + 1")
  list(APPEND bounds "${opposed} 202 -1")
  write_mtx(bounds_opposed.mtx ${opposed} 8001 ${bounds})
  run(mfcq --ineq bounds_opposed.mtx --eq dynamics.mtx --json)
  expect_rc(1)
  expect_key(positive_dependence certificate kind)
  expect_key(1 certificate ineq_rows 0)
  expect_key(${count} certificate ineq_rows 1)

elseif(GROUP STREQUAL "lp" OR GROUP STREQUAL "slater")
  # Hand-checkable MPS models (free format). opposed: x1 + x2 <= 1 and x1 + x2 >= 1 with
  # x >= 0, min x1 + 2 x2 + 5 (the RHS entry -5 on the objective row is the constant -(-5)):
  # optimum at (1, 0), objective 6; CAP and FLOOR are implicit equalities, no column pinned.
  write(opposed.mps "NAME          OPPOSED
ROWS
 N  COST
 L  CAP
 G  FLOOR
COLUMNS
    X1        COST      1.0   CAP       1.0
    X1        FLOOR     1.0
    X2        COST      2.0   CAP       1.0
    X2        FLOOR     1.0
RHS
    RHS       CAP       1.0   FLOOR     1.0
    RHS       COST      -5.0
ENDATA
")
  # interior: x1 + x2 <= 4, x >= 0, min -x1 - x2: objective -4; (1, 1) is strictly inside.
  write(interior.mps "NAME INTERIOR
ROWS
 N COST
 L LIM
COLUMNS
 X1 COST -1 LIM 1
 X2 COST -1 LIM 1
RHS
 RHS LIM 4
ENDATA
")
  # infeasible: x <= 0 and x >= 1 as rows, x free.
  write(infeasible.mps "NAME INFEASIBLE
ROWS
 N COST
 L ATMOST0
 G ATLEAST1
COLUMNS
 X COST 1 ATMOST0 1
 X ATLEAST1 1
RHS
 RHS ATLEAST1 1
BOUNDS
 FR BND X
ENDATA
")
  # infeasible2: x1 + x2 <= 1 and x1 + x2 >= 2, x free (no singleton row for presolve).
  write(infeasible2.mps "NAME INFEASIBLE2
ROWS
 N COST
 L UPTO1
 G FROM2
COLUMNS
 X1 COST 1 UPTO1 1
 X1 FROM2 1
 X2 COST 1 UPTO1 1
 X2 FROM2 1
RHS
 RHS UPTO1 1 FROM2 2
BOUNDS
 FR BND X1
 FR BND X2
ENDATA
")
  # unbounded: min -x s.t. x - y <= 1, x, y >= 0 (the ray (1, 1)).
  write(unbounded.mps "NAME UNBOUNDED
ROWS
 N COST
 L R1
COLUMNS
 X COST -1 R1 1
 Y R1 -1
RHS
 RHS R1 1
ENDATA
")
  # pinned: x1 + x2 <= 0 with x >= 0 leaves only x = 0: TOTAL is an implicit equality and
  # the lower bounds of X1 and X2 pin both columns.
  write(pinned.mps "NAME PINNED
ROWS
 N COST
 L TOTAL
COLUMNS
 X1 COST 1 TOTAL 1
 X2 COST 1 TOTAL 1
ENDATA
")
  write(garbled.mps "NAME GARBLED
ROWS
 N COST
 L LIM
COLUMNS
 X1 COST 1 LIM 1x
ENDATA
")
  write(truncated.mps "NAME CUT
ROWS
 N COST
 L LIM
COLUMNS
 X1 COST 1 LIM 1
")
  file(MAKE_DIRECTORY "${WORK_DIR}/folder.mps")
  set(command ${GROUP})

  if(GROUP STREQUAL "lp")
    run(lp opposed.mps)
    expect_rc(0)
    expect_in(out "LP optimal: objective 6")
    run(lp opposed.mps --json)
    expect_rc(0)
    expect_json()
    expect_key(optimal status)
    expect_key(lp check)
    expect_type(NUMBER iterations)
    expect_type(NUMBER primal_residual)
    expect_type(NUMBER dual_residual)
    expect_type(NUMBER gap)
    string(JSON objective GET "${out}" objective)
    count_check()
    if(objective LESS 5.9999999 OR objective GREATER 6.0000001)
      fail("objective ${objective}, expected 6")
    endif()
    run(lp interior.mps --json)
    expect_rc(0)
    string(JSON objective GET "${out}" objective)
    count_check()
    if(objective LESS -4.0000001 OR objective GREATER -3.9999999)
      fail("objective ${objective}, expected -4")
    endif()
    run(lp infeasible2.mps --json)
    expect_rc(1)
    expect_json()
    expect_key(infeasible status)
    expect_type(ARRAY farkas)
    run(lp unbounded.mps)
    expect_rc(1)
    expect_in(out "LP unbounded")
    run(INPUT interior.mps lp -)
    expect_rc(0)
  else()
    run(slater opposed.mps)
    expect_rc(1)
    expect_in(out "no strict interior")
    expect_in(out "implicit eq  CAP, FLOOR")
    expect_in(out "CAP holds with equality at its upper bound 1")
    run(slater opposed.mps --json)
    expect_rc(1)
    expect_json()
    expect_key(slater check)
    expect_key(fails verdict)
    expect_key(OFF strict_interior)
    expect_length(2 implicit_equalities)
    expect_key(CAP implicit_equalities 0)
    expect_key(FLOOR implicit_equalities 1)
    expect_length(0 implicit_fixed_columns)
    expect_type(NUMBER margin)
    expect_key(feasible feasibility)
    expect_key(holds refined_slater)
    run(slater interior.mps --json)
    expect_rc(0)
    expect_json()
    expect_key(holds verdict)
    expect_key(ON strict_interior)
    expect_length(0 implicit_equalities)
    run(slater interior.mps)
    expect_rc(0)
    expect_in(out "strict interior: a point meets every inequality strictly")
    run(slater pinned.mps --json)
    expect_rc(1)
    expect_key(fails verdict)
    expect_key(TOTAL implicit_equalities 0)
    expect_length(2 implicit_fixed_columns)
    expect_key(X1 implicit_fixed_columns 0)
    expect_key(X2 implicit_fixed_columns 1)
    run(slater infeasible.mps --json)
    expect_rc(1)
    expect_json()
    expect_key(infeasible verdict)
    expect_key(infeasible feasibility)
    expect_key(OFF strict_interior)
    expect_length(2 certificate_rows)
    run(slater infeasible2.mps --json)
    expect_rc(1)
    expect_key(infeasible verdict)
    run(slater infeasible.mps)
    expect_rc(1)
    expect_in(out "infeasible: no point meets the constraints")
    # The objective is ignored: an unbounded LP has a strict interior all the same.
    run(slater unbounded.mps)
    expect_rc(0)
    # A larger tolerance band: --tol is the relative slack tolerance.
    run(slater interior.mps --tol 1e-3 --json)
    expect_rc(0)
    expect_key(0.001 slack_tolerance)
    foreach(bad --tol=0 --tol=0.5 --tol=abc --tol=nan)
      run(slater interior.mps "${bad}")
      expect_rc(64)
      expect_in(err "--tol must be a finite number")
    endforeach()
    run(INPUT opposed.mps slater -)
    expect_rc(1)
    expect_in(out "CAP, FLOOR")
  endif()

  # Bad files and usage, the same for both commands.
  run_args(${command} missing.mps)
  expect_error(66 missing.mps)
  run_args(${command} folder.mps)
  expect_error(66 folder.mps)
  run_args(${command} garbled.mps)
  expect_error(65 garbled.mps 6)
  run_args(${command} truncated.mps)
  expect_error(65 truncated.mps)
  expect_in(err "ENDATA")
  run(${command})
  expect_rc(64)
  expect_in(err "missing MODEL.mps argument")
  run(${command} opposed.mps extra.mps)
  expect_rc(64)
  run(${command} --help)
  expect_rc(0)
  expect_in(out "Usage: qualify ${command} MODEL.mps")
  run(--help)
  expect_rc(0)
  expect_in(out "  ${command} ")

elseif(GROUP STREQUAL "kkt")
  # The farm-tank example of the README (hand-checked: grad f = (8, 8) = 8 (1, 1); only
  # demand is active; on null((-1, -1)) the Hessian diag(2, 4) gives 3 > 0; declared convex).
  set(tank_constraints "[
    { \"name\": \"demand\", \"type\": \"ineq\", \"kind\": \"affine\", \"value\": 0, \"gradient\": [-1, -1] },
    { \"name\": \"roof_space\", \"type\": \"ineq\", \"kind\": \"affine\", \"value\": -3, \"gradient\": [0, 1] },
    { \"name\": \"shade\", \"type\": \"ineq\", \"kind\": \"convex\", \"value\": -2.2,
      \"gradient\": [0.4, 1], \"hessian\": [[0.1, 0], [0, 0]] } ]")
  write(tank.json "{ \"x\": [4, 2], \"objective\": { \"gradient\": [8, 8], \"hessian\": [[2, 0], [0, 4]] },
  \"constraints\": ${tank_constraints},
  \"multipliers\": { \"demand\": 8, \"roof_space\": 0, \"shade\": 0 }, \"convex_model\": true }\n")
  run(kkt tank.json)
  expect_rc(0)
  expect_in(out "global minimiser: a KKT point")
  expect_in(out "  active       demand\n")
  expect_in(out "  second order sufficient")
  run(kkt tank.json --json)
  expect_rc(0)
  expect_json()
  expect_key(kkt check)
  expect_key(holds verdict)
  expect_key(global_min classification)
  expect_key(given multiplier_source)
  expect_key(8 multipliers demand)
  expect_key(0 multipliers shade)
  expect_key(demand active 0)
  expect_length(1 active)
  expect_length(0 weakly_active)
  expect_key(holds licq)
  expect_key(holds mfcq)
  expect_key(sufficient second_order)
  expect_key(holds residuals stationarity verdict)
  expect_type(NUMBER residuals primal scaled)
  expect_type(NUMBER residuals dual threshold)
  expect_type(NUMBER residuals complementarity raw)
  expect_length(5 premises)
  # Standard input, and the multipliers left out: estimated, the same answer.
  write(tank_estimated.json "{ \"x\": [4, 2], \"objective\": { \"gradient\": [8, 8], \"hessian\": [[2, 0], [0, 4]] },
  \"constraints\": ${tank_constraints}, \"convex_model\": true }\n")
  run(INPUT tank_estimated.json kkt - --json)
  expect_rc(0)
  expect_key(estimated multiplier_source)
  expect_type(NUMBER multipliers demand)
  expect_key(global_min classification)

  # Not a KKT point: at (5, 1) demand is active, but grad f = (10, 4) is no multiple of
  # (1, 1); LICQ holds, so the point is not a minimiser (hand-checked).
  write(off.json "{ \"x\": [5, 1], \"objective\": { \"gradient\": [10, 4] }, \"constraints\": [
    { \"name\": \"demand\", \"type\": \"ineq\", \"kind\": \"affine\", \"value\": 0, \"gradient\": [-1, -1] } ] }\n")
  run(kkt off.json)
  expect_rc(1)
  expect_in(out "not a KKT point: stationarity")
  expect_in(out "LICQ holds, so x is not a local minimiser")
  expect_in(out "not_stationary")
  run(kkt off.json --json)
  expect_rc(1)
  expect_json()
  expect_key(fails verdict)
  expect_key(not_kkt classification)
  expect_key(fails residuals stationarity verdict)
  expect_key(not_checked second_order)

  # The Kuhn-Tucker cusp (Kuhn and Tucker, 1951) at its minimiser (1, 0): no CQ, no multipliers.
  write(cusp.json "{ \"x\": [1, 0], \"objective\": { \"gradient\": [-1, 0] }, \"constraints\": [
    { \"name\": \"cusp\", \"type\": \"ineq\", \"kind\": \"nonlinear\", \"value\": 0, \"gradient\": [0, 1] },
    { \"name\": \"floor\", \"type\": \"ineq\", \"kind\": \"affine\", \"value\": 0, \"gradient\": [0, -1] } ] }\n")
  run(kkt cusp.json)
  expect_rc(1)
  expect_in(out "may still be a minimiser")
  expect_in(out "no_multipliers")
  run(kkt cusp.json --json)
  expect_rc(1)
  expect_json()
  expect_key(no_cq_holds classification)
  expect_key(fails licq)
  expect_key(fails mfcq)
  expect_key(fails linear_cq)

  # Given multipliers of the wrong sign: the pair is not a KKT pair (dual residual named).
  write(wrong_sign.json "{ \"x\": [4, 2], \"objective\": { \"gradient\": [8, 8] },
  \"constraints\": ${tank_constraints},
  \"multipliers\": { \"demand\": -8, \"roof_space\": 0, \"shade\": 0 } }\n")
  run(kkt wrong_sign.json --json)
  expect_rc(1)
  expect_key(fails residuals dual verdict)
  expect_key(0 residuals dual worst)

  # Within the band: grad f = (8, 8.00003) leaves 1.5e-5 against the threshold 8e-6
  # (hand-checked): undecided at the default tolerance, a KKT point at --tol 1e-4.
  write(band.json "{ \"x\": [4, 2], \"objective\": { \"gradient\": [8, 8.00003] }, \"constraints\": [
    { \"name\": \"demand\", \"type\": \"ineq\", \"kind\": \"affine\", \"value\": 0, \"gradient\": [-1, -1] } ] }\n")
  run(kkt band.json)
  expect_rc(2)
  expect_in(out "KKT undecided")
  run(kkt band.json --tol 1e-4 --json)
  expect_rc(0)
  expect_key(kkt_unique_multipliers classification)
  expect_key(holds residuals stationarity verdict)
  # The apex of a square pyramid (x3 >= |x1|, x3 >= |x2|) with grad f = (1, -2, 7): LICQ fails,
  # MFCQ holds, the multipliers form the segment l1 in [0, 2] (hand-derived).
  write(apex.json "{ \"x\": [0, 0, 0], \"objective\": { \"gradient\": [1, -2, 7] }, \"constraints\": [
    { \"name\": \"east\", \"type\": \"ineq\", \"kind\": \"affine\", \"value\": 0, \"gradient\": [1, 0, -1] },
    { \"name\": \"west\", \"type\": \"ineq\", \"kind\": \"affine\", \"value\": 0, \"gradient\": [-1, 0, -1] },
    { \"name\": \"north\", \"type\": \"ineq\", \"kind\": \"affine\", \"value\": 0, \"gradient\": [0, 1, -1] },
    { \"name\": \"south\", \"type\": \"ineq\", \"kind\": \"affine\", \"value\": 0, \"gradient\": [0, -1, -1] } ] }\n")
  run(kkt apex.json --json)
  expect_rc(0)
  expect_key(fails licq)
  expect_key(holds mfcq)
  expect_key(fails multipliers_unique)
  expect_key(holds multipliers_bounded)
  expect_length(4 multiplier_ranges)
  expect_key(east multiplier_ranges 0 name)

  # Errors: malformed files name the file and the line; usage.
  write(short_gradient.json "{ \"x\": [1, 2],\n  \"objective\": { \"gradient\": [1] }, \"constraints\": [] }\n")
  run_args(kkt short_gradient.json)
  expect_in(err "line 2, column 30: objective.gradient: expected 2 numbers")
  expect_error(65 short_gradient.json)
  run(kkt short_gradient.json --json)
  expect_key(2 line)
  write(broken.json "{ \"x\": [1,\n ] }\n")
  run_args(kkt broken.json)
  expect_in(err "line 2, column 2: expected a value")
  expect_error(65 broken.json)
  run(kkt broken.json --json)
  expect_key(2 line)
  run_args(kkt missing.json)
  expect_error(66 missing.json)
  run(kkt tank.json --tol 2)
  expect_rc(64)
  expect_in(err "--tol must be a finite number in (0, 1)")
  run(kkt)
  expect_rc(64)
  expect_in(err "missing POINT.json argument")
  run(kkt --help)
  expect_rc(0)
  expect_in(out "Usage: qualify kkt POINT.json [--tol X] [--json]")
  run(--help)
  expect_in(out "  kkt ")

elseif(GROUP STREQUAL "faults")
  # Files cut inside a line or an entry: 65, naming the file and the line.
  write(cut_value.mtx "%%MatrixMarket matrix coordinate real general\n2 2 2\n1 1 1\n2 2 1.5e")
  run_args(licq cut_value.mtx)
  expect_error(65 cut_value.mtx 4)
  expect_in(err "'1.5e'")
  write(cut_header.mtx "%%MatrixMarket matrix coord")
  run_args(licq cut_header.mtx)
  expect_error(65 cut_header.mtx 1)
  write(cut_array.mtx "%%MatrixMarket matrix array real general\n2 2\n1\n0\n0")
  run_args(mfcq --ineq cut_array.mtx)
  expect_error(65 cut_array.mtx 5)
  expect_in(err "ends after 3 of the 4 entries")
  write(cut_line.mps "NAME CUT\nROWS\n N COST\n L LIM\nCOLUMNS\n X1 COST 1 LI")
  run_args(lp cut_line.mps)
  expect_error(65 cut_line.mps 6)
  run_args(slater cut_line.mps)
  expect_error(65 cut_line.mps 6)
  write(cut_value.json "{ \"x\": [1, 2],\n  \"objective\": { \"gradient\": [1.")
  run_args(kkt cut_value.json)
  expect_in(err "line 2, column ")
  expect_error(65 cut_value.json)
  run(kkt cut_value.json --json)
  expect_key(2 line)
  write(cut_key.json "{ \"x\": [1, 2], \"obj")
  run_args(kkt cut_key.json)
  expect_in(err "line 1, column ")
  expect_error(65 cut_key.json)
  # The last line without its newline is complete: read, not refused.
  write(no_newline.mtx "%%MatrixMarket matrix coordinate real general\n2 2 2\n1 1 1\n2 2 1")
  run(licq no_newline.mtx)
  expect_rc(0)

  # Paths that cannot be read: 66 for every reader, the file and the reason named.
  write_mtx(good.mtx 2 2 "1 1 1" "2 2 1")
  write(good.labels "a\nb\n")
  write(good.mps "NAME OK\nROWS\n N COST\n L LIM\nCOLUMNS\n X1 COST 1 LIM 1\nRHS\n RHS LIM 4\nENDATA\n")
  write(good.json "{ \"x\": [1, 2], \"objective\": { \"gradient\": [1, 1] }, \"constraints\": [] }\n")
  file(MAKE_DIRECTORY "${WORK_DIR}/folder.json")
  run_args(kkt folder.json)
  expect_error(66 folder.json)
  expect_in(err "it is a directory")
  run_args(mfcq --ineq good.mtx --eq missing.mtx)
  expect_error(66 missing.mtx)
  expect_in(err "No such file or directory")
  # No read permission. Root (or CAP_DAC_OVERRIDE) reads such files anyway: then the case is
  # skipped with a message, unless setpriv (util-linux) can run the command as nobody.
  foreach(name good.mtx good.labels good.mps good.json)
    file(READ "${WORK_DIR}/${name}" text)
    write(locked_${name} "${text}")
    execute_process(COMMAND chmod 000 "${WORK_DIR}/locked_${name}")
  endforeach()
  execute_process(COMMAND cat "${WORK_DIR}/locked_good.mtx" RESULT_VARIABLE readable
                  OUTPUT_QUIET ERROR_QUIET)
  set(as_nobody)
  if(readable EQUAL 0)
    find_program(SETPRIV setpriv)
    if(SETPRIV)
      execute_process(COMMAND "${SETPRIV}" --reuid=65534 --regid=65534 --clear-groups
                              "${QUALIFY}" --version RESULT_VARIABLE nobody_rc
                              OUTPUT_QUIET ERROR_QUIET)
      if(nobody_rc EQUAL 0)
        set(as_nobody "${SETPRIV}" --reuid=65534 --regid=65534 --clear-groups)
      endif()
    endif()
  endif()
  if(readable EQUAL 0 AND NOT as_nobody)
    message(STATUS "cli faults: skipped: files without read permission are readable here "
                   "(running as root?) and setpriv cannot run the command as nobody")
  else()
    if(as_nobody)
      message(STATUS "cli faults: files without read permission: run as nobody through setpriv")
      set(RUN_AS ${as_nobody})
    endif()
    run_args(licq locked_good.mtx)
    expect_error(66 locked_good.mtx)
    expect_in(err "Permission denied")
    run_args(mfcq --ineq good.mtx --eq locked_good.mtx)
    expect_error(66 locked_good.mtx)
    run_args(licq good.mtx --labels locked_good.labels)
    expect_error(66 locked_good.labels)
    expect_in(err "Permission denied")
    run_args(lp locked_good.mps)
    expect_error(66 locked_good.mps)
    run_args(slater locked_good.mps)
    expect_error(66 locked_good.mps)
    expect_in(err "Permission denied")
    run_args(kkt locked_good.json)
    expect_error(66 locked_good.json)
    expect_in(err "Permission denied")
    unset(RUN_AS)
  endif()

else()
  message(FATAL_ERROR "unknown GROUP '${GROUP}'")
endif()

get_property(failures GLOBAL PROPERTY cli_failures)
get_property(checks GLOBAL PROPERTY cli_checks)
if(JQ)
  set(strict "jq confirmed the JSON")
else()
  set(strict "strict JSON check skipped: jq not found")
endif()
if(failures)
  message("${failures}")  # unformatted, as the program printed it
  message(FATAL_ERROR "cli ${GROUP}: failures among ${checks} checks (above)")
endif()
message(STATUS "cli ${GROUP}: ${checks} checks passed (${strict})")
