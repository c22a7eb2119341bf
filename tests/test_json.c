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

int main(void)
{
    gsl_set_error_handler(test_gsl_handler);
    const struct CMUnitTest tests[] = { cmocka_unit_test(rfc8259_escapes) };
    return cmocka_run_group_tests_name("json", tests, NULL, NULL);
}
