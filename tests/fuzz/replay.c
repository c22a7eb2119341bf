/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* Run a fuzz target over files without libFuzzer, so that any compiler with sanitizers can
** replay the committed corpus as a regression test.  Usage: replay FILE... */
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <unistd.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int main(int argc, char **argv)
{
    for (int i = 1; i < argc; i++) {
        FILE *f = fopen(argv[i], "rb");
        static uint8_t buf[1 << 20];
        size_t n;
        if (!f) {
            perror(argv[i]);
            return 1;
        }
        n = fread(buf, 1, sizeof buf, f);
        fclose(f);
        LLVMFuzzerTestOneInput(buf, n);
    }
    /* to the descriptor: a target may have pointed 'stdout' elsewhere (fuzz_quiet) */
    dprintf(STDOUT_FILENO, "replayed %d inputs\n", argc - 1);
    return 0;
}
