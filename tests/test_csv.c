/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The readings CSV reader: formats accepted (RFC 4180 quoting, common practice for decimal
** commas with ';' and tab) and every rejection with its FILE:LINE: field message. */
#include "testutil.h"

static int parse(const char *text, bg_readings *rs, bg_error *err)
{
    return bg_csv_parse(text, strlen(text), "bath.csv", rs, err);
}

static void comma_file(void **state)
{
    (void)state;
    bg_readings rs;
    const char *text = "\xEF\xBB\xBF# invented test data\r\n"
                       "time,temp_c,ohms,u_temp_k,u_ohms,note\r\n"
                       "2026-11-24T08:00:00Z,-20.0068,91495.67,0.0025,0.91,\"first, cold\"\r\n"
                       "\r\n"
                       "  # a comment in the middle\n"
                       "2026-11-24 08:20,25,10000,0.0025,0,\"say \"\"hi\"\"\"\n"
                       "2026-11-24,37.5,5989.4,0.003,0.5,\n";
    assert_int_equal(parse(text, &rs, NULL), BG_OK);
    assert_int_equal(rs.n, 3);
    assert_int_equal(rs.delim, ',');
    assert_true(rs.has_u_t && rs.has_u_r && rs.has_time && rs.has_note);
    assert_close(rs.v[0].pt.t_k, 253.1432, 1e-15, 0);
    assert_close(rs.v[0].pt.r_ohm, 91495.67, 1e-15, 0);
    assert_int_equal(rs.v[0].pt.line, 3);
    assert_string_equal(rs.v[0].note, "first, cold");
    assert_string_equal(rs.v[1].note, "say \"hi\"");
    assert_int_equal(rs.v[1].pt.line, 6);
    assert_null(rs.v[2].note);
    assert_string_equal(rs.v[2].time, "2026-11-24");
    bg_readings_release(&rs);
}

static void semicolon_and_tab(void **state)
{
    (void)state;
    bg_readings rs;
    assert_int_equal(parse("ohms;temp_k\n10000,5;298,15\n5000;310.2\n", &rs, NULL), BG_OK);
    assert_int_equal(rs.delim, ';');
    assert_close(rs.v[0].pt.r_ohm, 10000.5, 1e-15, 0);
    assert_close(rs.v[0].pt.t_k, 298.15, 1e-15, 0);
    assert_close(rs.v[1].pt.t_k, 310.2, 1e-15, 0);
    bg_readings_release(&rs);
    assert_int_equal(parse("temp_f\tohms\n77\t10000\n", &rs, NULL), BG_OK);
    assert_int_equal(rs.delim, '\t');
    assert_close(rs.v[0].pt.t_k, 298.15, 1e-14, 0); /* 77 F = 25 C */
    bg_readings_release(&rs);
}

static void expect_error(const char *text, const char *msg)
{
    bg_readings rs;
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(parse(text, &rs, &err), BG_EINVAL);
    assert_string_equal(err.msg, msg);
    assert_int_equal(rs.n, 0);
    assert_null(rs.v);
}

static void rejections(void **state)
{
    (void)state;
    expect_error("temp,ohms\n25,10000\n",
                 "bath.csv:1: unknown column 'temp' (known columns: temp_c, temp_k, temp_f, "
                 "ref_ohms, ohms, u_temp_k, u_ohms, time, note, volts, reported_c, code, u_volts, "
                 "excite_a)");
    expect_error("ohms,note\n1,x\n", "bath.csv:1: no temperature column (temp_c, temp_k, "
                                     "temp_f or ref_ohms)");
    expect_error("temp_c,temp_k,ohms\n", "bath.csv:1: more than one temperature column "
                                         "(temp_c, temp_k, temp_f or ref_ohms)");
    expect_error("temp_c,note\n", "bath.csv:1: no resistance column 'ohms'");
    expect_error("temp_c,ohms,ohms\n", "bath.csv:1: column 'ohms' appears twice");
    expect_error("temp_c,ohms\n25,10000\n# c\n30,abc\n",
                 "bath.csv:4: field 'ohms': not a number: 'abc'");
    expect_error("temp_c,ohms\n25,10000,3\n", "bath.csv:2: 3 fields, but the header has 2");
    expect_error("temp_c,ohms\n25\n", "bath.csv:2: 1 field, but the header has 2");
    expect_error("temp_c,ohms\n25,-3\n", "bath.csv:2: field 'ohms': must be greater than 0");
    expect_error("temp_c,ohms\n-300,3\n",
                 "bath.csv:2: field 'temp_c': -300 is at or below absolute zero");
    expect_error("temp_c,ohms\n25,\n", "bath.csv:2: field 'ohms': empty");
    expect_error("temp_c,ohms\nnan,5\n", "bath.csv:2: field 'temp_c': not a number: 'nan'");
    expect_error("temp_c,ohms\n25,1e999\n", "bath.csv:2: field 'ohms': not a number: '1e999'");
    expect_error("temp_c,ohms\n25,10000,5\n", "bath.csv:2: 3 fields, but the header has 2");
    expect_error("temp_c,ohms\n25,\"10000\n", "bath.csv:2: field 2: unterminated quote");
    expect_error("temp_c,ohms\n25,10\"000\n", "bath.csv:2: field 2: stray quote");
    expect_error("temp_c,ohms,u_temp_k\n25,10000,0\n",
                 "bath.csv:2: field 'u_temp_k': must be greater than 0");
    expect_error("temp_c,ohms,time\n25,10000,2026-02-30\n",
                 "bath.csv:2: field 'time': not an ISO 8601 date-time: '2026-02-30'");
    expect_error("temp_c,ohms\n25,10000,5\n", "bath.csv:2: 3 fields, but the header has 2");
    expect_error("", "bath.csv: no header line (an empty file?)");
    expect_error("# only a comment\n", "bath.csv: no header line (an empty file?)");
    expect_error("temperature\n", "bath.csv:1: cannot tell the delimiter from the header (use "
                                  "one of comma, semicolon or tab)");
    /* a decimal comma is not accepted with the comma delimiter: it would be ambiguous */
    expect_error("temp_c,ohms\n\"25,5\",10000\n", "bath.csv:2: field 'temp_c': not a number: "
                                                 "'25,5'");
}

/* A unit written into a value says where the unit belongs; a mistyped column name gets the
** nearest known one. */
static void unit_in_value_and_did_you_mean(void **state)
{
    (void)state;
    expect_error("temp_c,ohms\n25 C,10000\n",
                 "bath.csv:2: field 'temp_c': '25 C': a unit in the value; write the number "
                 "alone, the unit belongs in the column name (temp_c, temp_k or temp_f for "
                 "temperatures in degC, K or degF; ohms, u_ohms in ohm; u_temp_k in K)");
    expect_error("temp_k,ohms\n298.15,10kohm\n",
                 "bath.csv:2: field 'ohms': '10kohm': a unit in the value; write the number "
                 "alone, the unit belongs in the column name (temp_c, temp_k or temp_f for "
                 "temperatures in degC, K or degF; ohms, u_ohms in ohm; u_temp_k in K)");
    expect_error("temp_c,ohms\n25,10x5\n", "bath.csv:2: field 'ohms': not a number: '10x5'");
    expect_error("temp_c,ohm\n25,10000\n",
                 "bath.csv:1: unknown column 'ohm' (did you mean 'ohms'? known columns: temp_c, "
                 "temp_k, temp_f, ref_ohms, ohms, u_temp_k, u_ohms, time, note, volts, reported_c, "
                 "code, u_volts, excite_a)");
    expect_error("tmep_c,ohms\n25,10000\n",
                 "bath.csv:1: unknown column 'tmep_c' (did you mean 'temp_c'? known columns: "
                 "temp_c, temp_k, temp_f, ref_ohms, ohms, u_temp_k, u_ohms, time, note, volts, "
                 "reported_c, code, u_volts, excite_a)");
}

/* bg_suggest: edit distance with neighbour swaps as one edit (Damerau 1964), limits by length;
** the distances are counted by hand (common practice). */
static void suggest(void **state)
{
    (void)state;
    static const char *const names[] = { "fit", "lot", "probe", "curve", NULL, "export" };
    assert_string_equal(bg_suggest("fitt", 4, names, 6), "fit");     /* 1 insertion */
    assert_string_equal(bg_suggest("lto", 3, names, 6), "lot");      /* 1 swap */
    assert_string_equal(bg_suggest("PROBE", 5, names, 6), "probe");  /* case ignored */
    assert_string_equal(bg_suggest("exprot", 6, names, 6), "export"); /* 1 swap */
    assert_string_equal(bg_suggest("crve", 4, names, 6), "curve");   /* 1 deletion */
    assert_null(bg_suggest("frobnicate", 10, names, 6));
    assert_null(bg_suggest("xy", 2, names, 6)); /* 2 edits from "fit" are too many for 2 bytes */
    assert_null(bg_suggest("", 0, names, 6));
    assert_null(bg_suggest("fit", 3, names, 0));
}

static void times(void **state)
{
    (void)state;
    static const char *good[] = { "2026-11-24", "2026-11-24T08:00", "2026-11-24T08:00:00Z",
                                  "2026-11-24 08:00:00.25+01:00", "2024-02-29T23:59:60Z",
                                  "2026-11-24T08:00:00-0530" };
    static const char *bad[] = { "2026-13-01", "2025-02-29", "2026-11-24T24:00", "24.11.2026",
                                 "2026-11-24T08", "2026-11-24T08:00:00Q", "2026-11-24T08:00+1" };
    for (size_t i = 0; i < sizeof good / sizeof good[0]; i++)
        assert_true(bg_csv_valid_time(good[i]));
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++)
        assert_false(bg_csv_valid_time(bad[i]));
}

static void missing_file(void **state)
{
    (void)state;
    bg_readings rs;
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_csv_read_file("/nonexistent/readings.csv", &rs, &err), BG_ENOENT);
    assert_string_equal(err.msg, "cannot open '/nonexistent/readings.csv': No such file or "
                                 "directory");
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(comma_file), cmocka_unit_test(semicolon_and_tab),
        cmocka_unit_test(rejections), cmocka_unit_test(times),
        cmocka_unit_test(missing_file),
        cmocka_unit_test(unit_in_value_and_did_you_mean), cmocka_unit_test(suggest),
    };
    return cmocka_run_group_tests_name("csv", tests, NULL, NULL);
}
