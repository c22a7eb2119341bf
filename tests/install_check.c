/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Built against an installed copy of the library (make install-check): the headers and the
** pkg-config file are enough to use it.  Prints T(3000 ohm) for the encyclopedia sh3 example. */
#include <stdio.h>

#include <bandgap/bandgap.h>

int main(void)
{
    bg_model m;
    double c[3] = { 1.40e-3, 2.37e-4, 9.90e-8 }, t;
    if (bg_model_parse("sh3", &m, NULL) || bg_model_set_coef(&m, c, 3, NULL) ||
        bg_model_t_from_r(&m, 3000.0, &t, NULL))
        return 1;
    printf("%.3f\n", t - 273.15);
    return 0;
}
