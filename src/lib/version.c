/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The library's version string, set by the Makefile. */
#include "bandgap/bandgap.h"

#ifndef BG_VERSION
#define BG_VERSION "0.0.0"
#endif

const char *bg_version(void)
{
    return BG_VERSION;
}
