/* test_formula.c — the text side of formula problems (problems/formula_text.c) and the
 * generated code against libmatheval's evaluator, function by function.
 *
 * The rewrite's expected outputs are libmatheval 1.1.11's own derivative strings (as it
 * prints them on Debian 12) simplified by hand; the compiled functions are checked
 * against libmatheval's evaluator itself, bit for bit, at many points. */
#include <float.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "formula.h"
#include "formula_text.h"

/* q -> q[0], g -> P[0], anything else unknown */
static bool map(void *data, const char *name, char *out, size_t size)
{
    (void)data;
    if (strcmp(name, "q") == 0)
        return snprintf(out, size, "q[0]") > 0;
    if (strcmp(name, "g") == 0)
        return snprintf(out, size, "P[0]") > 0;
    return false;
}

static void rewrites(const char *infix, const char *c, const char *plain)
{
    dm_error err = { 0 };
    char *got = dm_formula_rewrite(infix, true, map, NULL, &err);
    assert_non_null(got);
    print_message("%s\n  -> %s\n", infix, got);
    assert_string_equal(got, c);
    free(got);
    got = dm_formula_rewrite(infix, false, map, NULL, &err);
    assert_non_null(got);
    assert_string_equal(got, plain);
    free(got);
}

static void derivative_terms_times_zero_are_dropped(void **state)
{
    (void)state;
    /* d/dq of -cos(q)*g, as libmatheval 1.1.11 returns it */
    rewrites("(((-(-sin(q)))*g)+((-cos(q))*0))", "(sin(q[0]) * P[0])", "(sin(q)*g)");
    /* d/dq of q^4/4: the quotient rule with its zero term */
    rewrites("((((4*(q^3))*4)-((q^4)*0))/16)", "(((4.0 * pow(q[0], 3.0)) * 4.0) / 16.0)",
             "(((4*(q^3))*4)/16)");
    /* a -0 printed without brackets, and a negative number in them */
    rewrites("((((-0*(q^2))+((-g)*(2*q)))*g)-(((-g)*(q^2))*0))",
             "(((-P[0]) * (2.0 * q[0])) * P[0])", "(((-g)*(2*q))*g)");
    rewrites("(((-2)*q)+(0*g))", "(-2.0 * q[0])", "(-2*q)");
    /* x*1, x^1, 0-x */
    rewrites("((1*q)+((q^1)-(0-g)))", "(q[0] + (q[0] - (-P[0])))", "(q+(q-(-g)))");
    rewrites("abs(q)", "fabs(q[0])", "abs(q)");
}

static void unreadable_output_is_an_error(void **state)
{
    (void)state;
    dm_error err = { 0 };
    assert_null(dm_formula_rewrite("((q+g)", true, map, NULL, &err));
    assert_non_null(strstr(err.msg, "cannot read"));
    assert_null(dm_formula_rewrite("(q+k)", true, map, NULL, &err));
    assert_non_null(strstr(err.msg, "cannot write"));
}

static void numbers_become_names_but_exponents_stay(void **state)
{
    (void)state;
    double constants[DM_FORMULA_MAX_CONSTANTS];
    int n = 0, column = -1;
    dm_formula_scan scan;
    dm_error err = { 0 };
    assert_int_equal(dm_formula_scan_text("0.1*q^2.5 + 3/g - q^(-2) + 1e-3", constants, &n,
                                          &scan, &column, &err), DM_OK);
    assert_string_equal(scan.text, "_k0*q^2.5 + _k1/g - q^(-2) + _k2");
    assert_int_equal(n, 3);
    assert_true(constants[0] == 0.1 && constants[1] == 3.0 && constants[2] == 1e-3);
    assert_int_equal(scan.n_names, 3); /* q, g, q */
    assert_string_equal(scan.names[1].name, "g");
    assert_int_equal(scan.names[1].column, 15);
    dm_formula_scan_free(&scan);
}

static void scan_refusals_name_the_column(void **state)
{
    (void)state;
    static const struct { const char *text; int column; const char *words; } bad[] = {
        { "q + $", 5, "unexpected character" },
        { "((q)", 1, "never closed" },
        { "q)", 2, "closes no bracket" },
        { "2q", 1, "malformed number '2q'" },
        { "1e + q", 1, "malformed number '1e'" },
        { "q\xc2\xb2", 2, "'\xc2\xb2' (a formula is plain ASCII: write a power as x^2)" },
        { "2*\xcf\x80*q", 3, "'\xcf\x80' (a formula is plain ASCII)" },
        { "q\t+\x01", 4, "control character (byte 0x01)" },
        { "q^2.1234567", 3, "exponent" },
        { "_k0 + q", 1, "starts with '_'" },
        { "   ", 1, "empty" },
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        double constants[DM_FORMULA_MAX_CONSTANTS];
        int n = 0, column = -1;
        dm_formula_scan scan;
        dm_error err = { 0 };
        assert_int_equal(dm_formula_scan_text(bad[i].text, constants, &n, &scan, &column, &err),
                         DM_EINPUT);
        print_message("'%s': column %d: %s\n", bad[i].text, column, err.msg);
        assert_int_equal(column, bad[i].column);
        assert_non_null(strstr(err.msg, bad[i].words));
    }
    /* what libmatheval refuses, located by its prefixes */
    assert_int_equal(dm_formula_error_column("q^2 + * 3"), 7);
    assert_int_equal(dm_formula_error_column("q q"), 3);
    assert_int_equal(dm_formula_error_column("sin(q) cos(q)"), 8);
}

/* A one-coordinate formula problem, compiled or (DRIFTMARK_FORMULA_CC empty) evaluated. */
static const dm_problem *make(const char *potential, const char *name, bool compiled)
{
    dm_formula_spec s = { .id = name, .potential = potential, .dof = 1,
                          .coordinates = { "q" }, .masses = { 1.0 } };
    if (compiled)
        unsetenv(DM_FORMULA_CC_ENV);
    else
        setenv(DM_FORMULA_CC_ENV, "", 1);
    const dm_problem *pb = NULL;
    dm_formula_where where;
    dm_error err = { 0 };
    assert_int_equal(dm_formula_create(&s, &pb, &where, &err), DM_OK);
    const dm_formula_info *info = dm_formula_info_of(pb);
    assert_non_null(info);
    assert_int_equal(info->code, compiled ? DM_FORMULA_COMPILED : DM_FORMULA_EVALUATED);
    return pb;
}

/* Equal, or both NaN, or (with `ulps` > 0) within that many units in the last place. */
static bool same(double a, double b, double ulps)
{
    return a == b || (isnan(a) && isnan(b)) ||
           fabs(a - b) <= ulps * DBL_EPSILON * fmax(fabs(a), fabs(b));
}

/* Bit for bit, but for one thing: gcc computes pow(x, 2) as x * x (correctly rounded),
 * where libmatheval calls glibc's pow, which is not always (its error is below 1 ulp):
 * where a formula or a derivative squares something (tanh's 1 / cosh(x)^2) the two
 * agree to rounding (2 ulp: the pow, then a division), and only there. */
static void compiled_functions_match_the_evaluator_bit_for_bit(void **state)
{
    (void)state;
    static const char *const formulas[] = {
        "exp(q)", "log(q^2 + 1)", "sqrt(q^2 + 1)", "sin(q)", "cos(q)", "tan(q)", "asin(q/2)",
        "acos(q/2)", "atan(q)", "sinh(q)", "cosh(q)", "tanh(q)", "abs(q)", "erf(q)",
        "pi*q^3 + e*q", "q^-2 + q^0.5", "2^q", "-1.5*cos(q)*q/0.7 - (q - 0.3)^4/4",
    };
    char cache[] = "/tmp/driftmark-test-formula-XXXXXX";
    assert_non_null(mkdtemp(cache));
    setenv("XDG_CACHE_HOME", cache, 1);
    for (size_t f = 0; f < sizeof formulas / sizeof formulas[0]; f++) {
        const dm_problem *c = make(formulas[f], "compiled", true);
        const dm_problem *e = make(formulas[f], "evaluated", false);
        double ulps = strcmp(formulas[f], "tanh(q)") == 0 || strcmp(formulas[f], "tan(q)") == 0
                          ? 2.0 : 0.0;
        dm_instance ic = { .problem = c, .dof = 1 }, ie = { .problem = e, .dof = 1 };
        int differ = 0;
        for (int k = 0; k < 2001; k++) {
            double q[1] = { -1.9 + 3.8 * k / 2000.0 }, gc[1], ge[1];
            double vc = c->force(&ic, q, gc), ve = e->force(&ie, q, ge);
            bool ok = same(vc, ve, 0.0) && same(gc[0], ge[0], ulps);
            differ += !ok;
            if (!ok)
                print_message("%s at %.17g: V %.17g %.17g, V' %.17g %.17g\n", formulas[f], q[0],
                              vc, ve, gc[0], ge[0]);
        }
        assert_int_equal(differ, 0);
    }
    unsetenv(DM_FORMULA_CC_ENV);
}

int main(void)
{
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(derivative_terms_times_zero_are_dropped),
        cmocka_unit_test(unreadable_output_is_an_error),
        cmocka_unit_test(numbers_become_names_but_exponents_stay),
        cmocka_unit_test(scan_refusals_name_the_column),
        cmocka_unit_test(compiled_functions_match_the_evaluator_bit_for_bit),
    };
    return cmocka_run_group_tests(tests, NULL, NULL);
}
