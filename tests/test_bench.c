/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The bench module: the stability criterion's line (slope and scatter) against numpy, and the
** sequence file read strictly (values, defaults stated in docs/sequence-file.md, refusals
** with their line).  The engine and SCPI run against the simulated bench in
** tests/sequence.sh. */
#include <stdio.h>
#include <unistd.h>

#include "testutil.h"

static void settle_line(void **state)
{
    (void)state;
    double t[10], v[10], slope, scatter;
    /* an exact line: slope 2e-3 K/s, no scatter (derived) */
    for (int i = 0; i < 10; i++)
        t[i] = 1764547200.0 + 0.5 * i, v[i] = 300.0 + 2e-3 * 0.5 * i;
    assert_int_equal(bg_settle_line(t, v, 10, &slope, &scatter, NULL), BG_OK);
    assert_close(slope, 2e-3, 1e-9, 0);
    assert_true(scatter < 1e-9);
    /* noisy invented readings: numpy.polyfit(t - mean(t), v, 1) slope and the residuals'
    ** sqrt(sum(r^2) / (n - 2)), numpy 1.24 (computed once, values below) */
    static const double vn[10] = { 298.1512, 298.1498, 298.1507, 298.1521, 298.1503,
                                   298.1516, 298.1509, 298.1525, 298.1511, 298.1519 };
    assert_int_equal(bg_settle_line(t, vn, 10, &slope, &scatter, NULL), BG_OK);
    assert_close(slope, 0.00026787878788365257, 1e-7, 0);
    assert_close(scatter, 0.0007737061536017241, 1e-7, 0);
    /* too few points, or one time */
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_settle_line(t, v, 2, &slope, &scatter, &err), BG_EINVAL);
    double same[3] = { 5.0, 5.0, 5.0 };
    assert_int_equal(bg_settle_line(same, v, 3, &slope, &scatter, &err), BG_EINVAL);
}

static const char good[] =
    "; INVENTED\n[sequence]\nsetpoints = 0 C, 25 C, 77 F\nreadings = 4\nmedium = oil\n"
    "measuring_voltage = 100 mV\n"
    "[stability]\nwindow = 2 min\nsample_interval = 500 ms\nmax_drift = 1 mK/min\n"
    "max_scatter = 2 mK\ntime_limit = 1 h\non_timeout = stop\n"
    "[medium]\nmin = -40 C\nmax = 150 C\nsafe_setpoint = 298.15 K\n"
    "[reference]\nident = R-1\nunit = ohm\n"
    "[probe A-1]\nchannel = 101\n[probe A-2]\nchannel = 102\n"
    "[instrument bath]\ntransport = serial\ndevice = /dev/ttyS0\nbaud = 9600\nunit = C\n"
    "get = TEMP?\n"
    "[instrument meter]\ntransport = tcp\nhost = 192.0.2.1\n"
    "[instrument scanner]\ntransport = tcp\nhost = 192.0.2.1\nport = 5026\ntimeout = 3 s\n"
    "[instrument reference]\ntransport = usbtmc\ndevice = /dev/usbtmc0\n";

static int load_text(const char *text, bg_seq *q, bg_error *err)
{
    char path[] = "/tmp/bg-seq-XXXXXX";
    int fd = mkstemp(path);
    assert_true(fd >= 0);
    FILE *f = fdopen(fd, "w");
    fputs(text, f);
    fclose(f);
    int rc = bg_seq_load(path, q, err);
    unlink(path);
    if (rc != BG_OK) { /* the message without the temporary name */
        size_t n = strlen(path);
        if (strncmp(err->msg, path, n) == 0)
            memmove(err->msg, err->msg + n, strlen(err->msg + n) + 1);
    }
    return rc;
}

static void seq_good(void **state)
{
    (void)state;
    bg_seq q;
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(load_text(good, &q, &err), BG_OK);
    assert_int_equal(q.nsp, 3);
    assert_close(q.setpoint_k[1], 298.15, 1e-15, 0);
    assert_close(q.setpoint_k[2], 298.15, 1e-12, 0); /* 77 F = 25 C (definition) */
    assert_int_equal(q.readings, 4);
    assert_close(q.measuring_voltage_v, 0.1, 1e-15, 0);
    assert_close(q.window_s, 120.0, 0, 0);
    assert_close(q.sample_s, 0.5, 1e-15, 0);
    assert_close(q.max_drift_k_s, 1e-3 / 60.0, 1e-12, 0);
    assert_close(q.max_scatter_k, 2e-3, 1e-12, 0);
    assert_close(q.time_limit_s, 3600.0, 0, 0);
    assert_int_equal(q.stop_on_timeout, 1);
    assert_int_equal(q.ref_ohms, 1);
    assert_int_equal(q.nprobes, 2);
    assert_string_equal(q.probes[1].channel, "102");
    assert_int_equal(q.instr[BG_ROLE_BATH].transport, BG_TR_SERIAL);
    assert_int_equal(q.instr[BG_ROLE_BATH].baud, 9600);
    assert_string_equal(q.instr[BG_ROLE_BATH].cmd[0], "SOUR:TEMP {}");  /* default */
    assert_string_equal(q.instr[BG_ROLE_BATH].cmd[1], "TEMP?");         /* given */
    assert_int_equal(q.instr[BG_ROLE_METER].port, 5025);                /* LXI default */
    assert_int_equal(q.instr[BG_ROLE_SCANNER].port, 5026);
    assert_close(q.instr[BG_ROLE_SCANNER].timeout_s, 3.0, 0, 0);
    assert_string_equal(q.instr[BG_ROLE_REFERENCE].cmd[0], "MEAS:FRES?"); /* unit ohm */
    assert_int_equal(strlen(q.sha256), 64);
    assert_string_equal(q.text, good);
    bg_seq_release(&q);
}

/* Replace the first 'from' in the good file by 'to' and expect 'msg'. */
static void refused(const char *from, const char *to, const char *msg)
{
    char text[sizeof good + 256];
    const char *at = strstr(good, from);
    bg_seq q;
    bg_error err = BG_ERROR_INIT;
    assert_non_null(at);
    snprintf(text, sizeof text, "%.*s%s%s", (int)(at - good), good, to, at + strlen(from));
    assert_int_equal(load_text(text, &q, &err), BG_EINVAL);
    assert_string_equal(err.msg, msg);
}

static void seq_refusals(void **state)
{
    (void)state;
    refused("readings = 4", "readings = 4\nreadings = 5", ":5: 'readings' given twice in "
            "[sequence]");
    refused("medium = oil", "medum = oil", ":5: unknown key 'medum' in this section (did you "
            "mean 'medium'?)");
    refused("[medium]", "[medum]", ":14: unknown section [medum] (sections: sequence, "
            "stability, medium, reference, probe SERIAL, instrument bath|meter|scanner|"
            "reference)");
    refused("window = 2 min", "window = 2", ":8: 'window': '2': a bare number is refused: give "
            "the unit, s, optionally after an SI prefix (p, n, u, m, k, M, G) (a duration: 60 "
            "s, 500 ms, 30 min, 2 h)");
    refused("max = 150 C", "max = 20 C", ":3: setpoint 2 (25.00 \xC2\xB0" "C) is outside the "
            "medium's limits -40.00 \xC2\xB0" "C to 20.00 \xC2\xB0" "C: refused");
    refused("on_timeout = stop", "on_timeout = wait", ":13: 'on_timeout': 'wait': expected skip "
            "or stop");
    refused("time_limit = 1 h\n", "", ":7: section [stability]: 'time_limit' is missing");
    refused("baud = 9600\n", "", ":25: section [instrument bath]: 'baud' is missing "
            "(transport serial)");
    refused("ident = R-1", "ident =", ":19: 'ident': no value");
    refused("channel = 102", "channel = 101", ":24: 'channel': 101 is also probe A-1's "
            "channel");
    refused("get = TEMP?", "get = TEMP {}?", ":30: 'get': 'TEMP {}?': takes no value ({})");
    refused("[probe A-2]\nchannel = 102\n", "[probe A-2]\n", ":23: section [probe A-2]: "
            "'channel' is missing");
    refused("readings = 4", "readings 4", ":4: not a section header or name = value");
    refused("readings = 4", "readings = \x01", ":4: control characters or invalid UTF-8");
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(settle_line), cmocka_unit_test(seq_good),
        cmocka_unit_test(seq_refusals),
    };
    return cmocka_run_group_tests_name("bench", tests, NULL, NULL);
}
