// qualify: the library version, kept equal to project(VERSION) in CMakeLists.txt.
// SPDX-License-Identifier: MIT
#pragma once

#define QUALIFY_VERSION_MAJOR 0
#define QUALIFY_VERSION_MINOR 1
#define QUALIFY_VERSION_PATCH 0
