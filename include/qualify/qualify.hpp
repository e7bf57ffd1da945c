// qualify: the umbrella header, every capability (add-ons format, json and doctest are separate).
// SPDX-License-Identifier: MIT
#pragma once

#include <qualify/version.hpp>
#include <qualify/report.hpp>
#include <qualify/constraints.hpp>
#include <qualify/model.hpp>
#include <qualify/licq.hpp>
#include <qualify/sparse_licq.hpp>
#include <qualify/linear_cq.hpp>
#include <qualify/matrix_market.hpp>
#include <qualify/mps.hpp>
#include <qualify/lp.hpp>
#include <qualify/mfcq.hpp>
#include <qualify/slater.hpp>
#include <qualify/derivative_check.hpp>
#include <qualify/kkt.hpp>
