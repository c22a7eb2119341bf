/* SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE) */
/* The JSON string escaper against the escapes of RFC 8259, section 7: quotation mark and
** reverse solidus escaped, control characters U+0000..U+001F escaped (the short forms \n \r
** \t, the others as \u00XX), everything else, UTF-8 included, as it is. */
#include "testutil.h"

static char *escaped(const char *s)
{
    char *out = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&out, &len);
    assert_non_null(f);
    bg_json_write_string(f, s);
    assert_int_equal(fclose(f), 0);
    return out;
}

static void rfc8259_escapes(void **state)
{
    (void)state;
    static const struct { const char *in, *out; } cases[] = {
        { "plain", "\"plain\"" },
        { "a\"b", "\"a\\\"b\"" },
        { "a\\b", "\"a\\\\b\"" },
        { "l1\nl2\r\tx", "\"l1\\nl2\\r\\tx\"" },
        { "\x1b]0;title\x07", "\"\\u001b]0;title\\u0007\"" },
        { "\x01\x1f", "\"\\u0001\\u001f\"" },
        { "25 \xc2\xb0" "C, 10 k\xce\xa9", "\"25 \xc2\xb0" "C, 10 k\xce\xa9\"" },
        { "</script>", "\"</script>\"" },
        { "", "\"\"" },
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char *got = escaped(cases[i].in);
        assert_string_equal(got, cases[i].out);
        free(got);
    }
    char *null = escaped(NULL);
    assert_string_equal(null, "\"\"");
    free(null);
}

/* Whatever the bytes, the output is valid JSON: a byte that does not start valid UTF-8
** (RFC 3629) becomes U+FFFD; DEL, the C1 controls and the bidirectional controls are escaped. */
static void always_valid(void **state)
{
    (void)state;
    static const struct { const char *in, *out; } cases[] = {
        { "a\xff" "b", "\"a\\ufffdb\"" },
        { "\xc0\xaf", "\"\\ufffd\\ufffd\"" },           /* overlong '/' (RFC 3629, section 10) */
        { "\xed\xa0\x80", "\"\\ufffd\\ufffd\\ufffd\"" }, /* a surrogate (RFC 3629, section 3) */
        { "x\xe2\x82", "\"x\\ufffd\\ufffd\"" },          /* cut short */
        { "\x7f\xc2\x9b", "\"\\u007f\\u009b\"" },
        { "1\xe2\x80\xae" "2", "\"1\\u202e2\"" },
        { "\xf0\xa3\x8e\xb4", "\"\xf0\xa3\x8e\xb4\"" }, /* U+233B4 (RFC 3629, section 7) */
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        char *got = escaped(cases[i].in);
        assert_string_equal(got, cases[i].out);
        free(got);
    }
}

/* The decoder against RFC 3629: its section 7 examples decode to the code points given there,
** and the ill-formed sequences of its section 3 table (and the overlong forms section 10
** warns of) are refused. */
static void utf8_rfc3629(void **state)
{
    (void)state;
    static const struct { const char *in; uint32_t cp[4]; size_t n; } good[] = {
        { "A\xe2\x89\xa2\xce\x91.", { 0x41, 0x2262, 0x391, 0x2e }, 4 },
        { "\xed\x95\x9c\xea\xb5\xad\xec\x96\xb4", { 0xd55c, 0xad6d, 0xc5b4 }, 3 },
        { "\xe6\x97\xa5\xe6\x9c\xac\xe8\xaa\x9e", { 0x65e5, 0x672c, 0x8a9e }, 3 },
        { "\xef\xbb\xbf\xf0\xa3\x8e\xb4", { 0xfeff, 0x233b4 }, 2 },
    };
    for (size_t i = 0; i < sizeof good / sizeof good[0]; i++) {
        const unsigned char *p = (const unsigned char *)good[i].in;
        size_t n = strlen(good[i].in), k = 0;
        for (size_t at = 0; at < n; k++) {
            uint32_t cp;
            size_t len = bg_utf8_decode(p + at, n - at, &cp);
            assert_true(len > 0);
            assert_true(k < good[i].n);
            assert_int_equal(cp, good[i].cp[k]);
            at += len;
        }
        assert_int_equal(k, good[i].n);
        assert_int_equal(bg_text_check("t", good[i].in, n, NULL), BG_OK);
    }
    static const char *const bad[] = {
        "\x80", "\xbf", "\xc0\x80", "\xc1\xbf", "\xe0\x80\x80", "\xe0\x9f\xbf",
        "\xed\xa0\x80", "\xed\xbf\xbf", "\xf0\x8f\xbf\xbf", "\xf4\x90\x80\x80", "\xf5\x80\x80\x80",
        "\xfe", "\xff", "\xe2\x82", "\xc3\x28",
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        uint32_t cp;
        bg_error err = BG_ERROR_INIT;
        assert_int_equal(bg_utf8_decode((const unsigned char *)bad[i], strlen(bad[i]), &cp), 0);
        assert_int_equal(bg_text_check("note", bad[i], strlen(bad[i]), &err), BG_EINVAL);
        assert_non_null(strstr(err.msg, "note: not valid UTF-8 at byte 1"));
    }
}

/* What a text field may not hold: C0 controls but tab, DEL, C1, bidirectional controls. */
static void forbidden_characters(void **state)
{
    (void)state;
    bg_error err = BG_ERROR_INIT;
    assert_int_equal(bg_text_check("serial", "a\tb", 3, NULL), BG_OK);
    assert_int_equal(bg_text_check("serial", "ab\x1b]0;x\x07", 8, &err), BG_EINVAL);
    assert_string_equal(err.msg, "serial: control character 0x1B at byte 3 (only tab is allowed)");
    assert_int_equal(bg_text_check("note", "a\nb", 3, &err), BG_EINVAL);
    assert_int_equal(bg_text_check("note", "\x7f", 1, &err), BG_EINVAL);
    assert_int_equal(bg_text_check("note", "x\xc2\x9b", 3, &err), BG_EINVAL);
    assert_string_equal(err.msg, "note: control character U+009B at byte 2");
    assert_int_equal(bg_text_check("lot code", "1\xe2\x81\xa6", 4, &err), BG_EINVAL);
    assert_string_equal(err.msg, "lot code: bidirectional control U+2066 at byte 2");
    assert_int_equal(bg_text_check("note", "\xc2\xa0\xe2\x80\xa9", 5, NULL), BG_OK); /* NBSP, PS */
    for (uint32_t cp = 0; cp < 0x110000; cp++) {
        int expect = cp < 0x20 ? cp != 9 : (cp >= 0x7f && cp <= 0x9f) ||
                     (cp >= 0x202a && cp <= 0x202e) || (cp >= 0x2066 && cp <= 0x2069);
        assert_int_equal(bg_text_forbidden(cp), expect);
    }
}

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = { cmocka_unit_test(rfc8259_escapes),
                                        cmocka_unit_test(always_valid),
                                        cmocka_unit_test(utf8_rfc3629),
                                        cmocka_unit_test(forbidden_characters) };
    return cmocka_run_group_tests_name("json", tests, NULL, NULL);
}
