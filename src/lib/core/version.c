/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The library's version string, set by the Makefile; the GSL version it runs with, and the one
** switch of GSL's process-wide error handler that a program may ask the library to make. */
#include <gsl/gsl_errno.h>
#include <gsl/gsl_version.h>

#include "bandgap/bandgap.h"

#ifndef BG_VERSION
#define BG_VERSION "0.0.0"
#endif

const char *bg_version(void)
{
    return BG_VERSION;
}

const char *bg_gsl_version(void)
{
    return gsl_version;
}

void bg_gsl_handler_off(void)
{
    gsl_set_error_handler_off();
}
