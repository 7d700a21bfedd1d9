/* test_common.c — the shared helpers: number parsing and "did you mean", the shortest
 * number text and the JSON writer. */
#include "dm_test_util.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "dm_error.h"
#include "dm_json.h"
#include "dm_number_text.h"

static void parse_double_accepts_plain_numbers(void **state)
{
    double v;
    assert_int_equal(dm_parse_double("2.5", &v), 0);
    assert_true(v == 2.5);
    assert_int_equal(dm_parse_double("-1e-3", &v), 0);
    assert_true(v == -1e-3);
}

static void parse_double_rejects_junk_nan_inf_and_overflow(void **state)
{
    double v;
    assert_int_not_equal(dm_parse_double("", &v), 0);
    assert_int_not_equal(dm_parse_double("2.5x", &v), 0);
    assert_int_not_equal(dm_parse_double("nan", &v), 0);
    assert_int_not_equal(dm_parse_double("inf", &v), 0);
    assert_int_not_equal(dm_parse_double("-Infinity", &v), 0);
    assert_int_not_equal(dm_parse_double("1e999", &v), 0);
    assert_int_not_equal(dm_parse_double(" ", &v), 0);
}

static void suggest_finds_close_misspellings_only(void **state)
{
    const char *names[] = { "verlet", "verlet-dkd", "yoshida4", "rk4" };
    assert_string_equal(dm_suggest("verlett", names, 4), "verlet");
    assert_string_equal(dm_suggest("yoshida5", names, 4), "yoshida4");
    assert_null(dm_suggest("pendulum", names, 4));
}

static void error_prefix_keeps_the_message(void **state)
{
    dm_error e;
    dm_error_set(&e, DM_EINPUT, "unknown method '%s'", "verlett");
    dm_error_prefix(&e, "%s:%d:%d: ", "suite.yaml", 12, 9);
    assert_string_equal(e.msg, "suite.yaml:12:9: unknown method 'verlett'");
    assert_int_equal(e.code, DM_EINPUT);
}

/* A value just beyond its limit is printed with the digits that tell them apart. */
static void value_and_limit_are_printed_apart(void **state)
{
    (void)state;
    char v[40], l[40];
    dm_number_text_apart(-1.0000108, 1.0, v, l, sizeof v);
    assert_string_equal(v, "-1.00001");
    assert_string_equal(l, "1");
    dm_number_text_apart(0.0123456, 0.01, v, l, sizeof v);   /* 3 digits suffice */
    assert_string_equal(v, "0.0123");
    assert_string_equal(l, "0.01");
    dm_number_text_apart(1.0000000000000002, 1.0, v, l, sizeof v);
    assert_string_equal(v, "1.0000000000000002");
    dm_number_text_apart(1.000011, 1.00001, v, l, sizeof v);  /* both get the digits */
    assert_string_equal(v, "1.000011");
    assert_string_equal(l, "1.00001");
}

static void number_text_is_the_shortest_that_reads_back(void **state)
{
    char buf[40];
    /* 0.1 and pi as IEEE doubles: 17 digits would show 0.10000000000000001 and
     * 3.1415926535897931 (C11 7.21.6.1 %g; the double nearest pi, IEEE 754 binary64) */
    dm_number_text(0.1, buf, sizeof buf);
    assert_string_equal(buf, "0.1");
    dm_number_text(M_PI, buf, sizeof buf);
    assert_string_equal(buf, "3.141592653589793");
    dm_number_text(-2.5, buf, sizeof buf);
    assert_string_equal(buf, "-2.5");
    dm_number_text(-INFINITY, buf, sizeof buf);
    assert_string_equal(buf, "-inf");
    dm_number_text(INFINITY, buf, sizeof buf);
    assert_string_equal(buf, "inf");
    /* every value reads back exactly, and one digit fewer would not (past %g's six) */
    const double values[] = { 1.0 / 3.0, 2.0 / 3.0, 1e-300, 123456.789, 0.3, 1e22,
                              5e-324, 1.7976931348623157e308, 0.1 + 0.2 };
    for (size_t i = 0; i < sizeof values / sizeof values[0]; i++) {
        dm_number_text(values[i], buf, sizeof buf);
        assert_true(strtod(buf, NULL) == values[i]);
        /* significant digits: from the first nonzero one to the exponent */
        const char *c = buf + strcspn(buf, "123456789");
        int digits = 0;
        for (; *c && *c != 'e'; c++)
            digits += *c >= '0' && *c <= '9';
        if (digits > 6) {
            char shorter[400];
            snprintf(shorter, sizeof shorter, "%.*g", digits - 1, values[i]);
            assert_false(strtod(shorter, NULL) == values[i]);
        }
    }
}

static void json_writer_escapes_and_writes_null(void **state)
{
    char *text = NULL;
    size_t size = 0;
    FILE *f = open_memstream(&text, &size);
    assert_non_null(f);
    dm_json_string(f, "a\"b\\c\nd\te\x01");
    fputc(' ', f);
    dm_json_string(f, NULL);
    fputc(' ', f);
    dm_json_number(f, 0.1, NULL);
    fputc(' ', f);
    dm_json_number(f, 0.1, "%.17g");
    fputc(' ', f);
    dm_json_number(f, NAN, NULL);
    fputc(' ', f);
    dm_json_number(f, -INFINITY, "%g");
    fclose(f);
    assert_string_equal(text, "\"a\\\"b\\\\c\\nd\\te\\u0001\" \"\" 0.1 "
                              "0.10000000000000001 null null");
    free(text);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(parse_double_accepts_plain_numbers),
        cmocka_unit_test(parse_double_rejects_junk_nan_inf_and_overflow),
        cmocka_unit_test(suggest_finds_close_misspellings_only),
        cmocka_unit_test(error_prefix_keeps_the_message),
        cmocka_unit_test(number_text_is_the_shortest_that_reads_back),
        cmocka_unit_test(value_and_limit_are_printed_apart),
        cmocka_unit_test(json_writer_escapes_and_writes_null),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
