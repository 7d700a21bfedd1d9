/* formula_text.c — lexing a formula for libmatheval, and rewriting its output
 * (formula_text.h). */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <matheval.h>

#include "formula_text.h"

/* libmatheval's functions whose values we reproduce in generated C bit for bit
 * (tests/test_formula.c compares them with its evaluator). */
const char *const dm_formula_functions[] = { "exp", "log", "sqrt", "sin", "cos", "tan",
                                             "asin", "acos", "atan", "sinh", "cosh",
                                             "tanh", "abs", "erf", NULL };

bool dm_formula_is_function(const char *name)
{
    for (int i = 0; dm_formula_functions[i] != NULL; i++)
        if (strcmp(name, dm_formula_functions[i]) == 0)
            return true;
    return false;
}

bool dm_formula_is_constant(const char *name)
{
    return strcmp(name, "pi") == 0 || strcmp(name, "e") == 0;
}

static bool name_start(int ch)
{
    return isalpha(ch) || ch == '_';
}

static bool name_char(int ch)
{
    return isalnum(ch) || ch == '_';
}

/* The last non-blank character before position i, or 0; *at gets its position. */
static char before(const char *s, size_t i, size_t *at)
{
    while (i > 0) {
        i--;
        if (!isspace((unsigned char)s[i])) {
            *at = i;
            return s[i];
        }
    }
    return 0;
}

/* Whether the number starting at i is an exponent: after ^, ^-, ^( or ^(-. */
static bool is_exponent(const char *s, size_t i)
{
    size_t at = 0;
    char c = before(s, i, &at);
    if (c == '-')
        c = before(s, at, &at);
    if (c == '(')
        c = before(s, at, &at);
    if (c == '-') /* ^(- */
        c = before(s, at, &at);
    return c == '^';
}

/* Whether a 6-significant-digit print of x (libmatheval's) reads back as x. */
static bool survives_print(double x)
{
    char buf[40];
    snprintf(buf, sizeof buf, "%g", x);
    return strtod(buf, NULL) == x;
}

static dm_status add_name(dm_formula_scan *out, const char *s, size_t i, size_t n,
                          dm_error *err)
{
    dm_formula_name *nm = &out->names[out->n_names++];
    if (n >= sizeof nm->name)
        return dm_error_set(err, DM_EINPUT, "the name '%.20s...' is too long (expected at "
                            "most %zu characters)", s + i, sizeof nm->name - 1);
    memcpy(nm->name, s + i, n);
    nm->name[n] = '\0';
    nm->column = (int)i + 1;
    size_t j = i + n;
    while (isspace((unsigned char)s[j]))
        j++;
    nm->function = s[j] == '(';
    if (s[i] == '_')
        return dm_error_set(err, DM_EINPUT, "the name '%s' starts with '_' (expected a name "
                            "starting with a letter)", nm->name);
    return DM_OK;
}

/* A number at s + i: appended to the output as itself (an exponent) or as a name. */
static dm_status add_number(const char *s, size_t *i, char *o, size_t *used, double *constants,
                            int *n_constants, dm_error *err)
{
    size_t n = 0;
    while (isdigit((unsigned char)s[*i + n]) || s[*i + n] == '.')
        n++;
    if (s[*i + n] == 'e' || s[*i + n] == 'E') {
        size_t m = n + 1;
        if (s[*i + m] == '+' || s[*i + m] == '-')
            m++;
        if (isdigit((unsigned char)s[*i + m])) {
            while (isdigit((unsigned char)s[*i + m]))
                m++;
            n = m;
        }
    }
    char buf[64];
    char *end = NULL;
    double v = NAN;
    if (n < sizeof buf) {
        memcpy(buf, s + *i, n);
        buf[n] = '\0';
        v = strtod(buf, &end);
    }
    if (end == NULL || *end != '\0' || name_char((unsigned char)s[*i + n]) ||
        s[*i + n] == '.' || !isfinite(v)) {
        size_t shown = n; /* with what stuck to it: "1e", "2q", "1.2.3" */
        while (name_char((unsigned char)s[*i + shown]) || s[*i + shown] == '.')
            shown++;
        return dm_error_set(err, DM_EINPUT, "malformed number '%.*s'",
                            (int)(shown < 40 ? shown : 40), s + *i);
    }
    if (is_exponent(s, *i)) {
        if (!survives_print(v) || !survives_print(v - 1.0))
            return dm_error_set(err, DM_EINPUT, "the exponent %s has more digits than the "
                                "formula library keeps in a derivative (6 significant, for "
                                "it and for it minus 1): write it shorter, or as a parameter",
                                buf);
        memcpy(o + *used, s + *i, n);
        *used += n;
    } else {
        if (*n_constants >= DM_FORMULA_MAX_CONSTANTS)
            return dm_error_set(err, DM_EINPUT, "more than %d numbers in the formulas",
                                DM_FORMULA_MAX_CONSTANTS);
        constants[*n_constants] = v;
        *used += (size_t)sprintf(o + *used, "_k%d", *n_constants);
        (*n_constants)++;
    }
    *i += n;
    return DM_OK;
}

dm_status dm_formula_scan_text(const char *s, double *constants, int *n_constants,
                               dm_formula_scan *out, int *column, dm_error *err)
{
    size_t len = strlen(s);
    memset(out, 0, sizeof *out);
    /* a number of up to 2 characters becomes "_kNNN": at most 3 times longer */
    out->text = malloc(3 * len + 8);
    out->names = malloc((len / 1 + 1) * sizeof *out->names);
    if (out->text == NULL || out->names == NULL)
        return dm_error_set(err, DM_ENOMEM, "out of memory reading a formula");
    size_t used = 0, i = 0;
    int depth = 0;
    bool any = false;                /* a character other than a blank */
    size_t open_at[256];
    dm_status st = DM_OK;
    *column = 0;
    while (i < len && st == DM_OK) {
        unsigned char ch = (unsigned char)s[i];
        size_t start = i;
        any = any || !isspace(ch);
        if (isspace(ch)) {
            out->text[used++] = ' ';
            i++;
        } else if (name_start(ch)) {
            size_t n = 0;
            while (name_char((unsigned char)s[i + n]))
                n++;
            st = add_name(out, s, i, n, err);
            memcpy(out->text + used, s + i, n);
            used += n;
            i += n;
        } else if (isdigit(ch) || (ch == '.' && isdigit((unsigned char)s[i + 1]))) {
            st = add_number(s, &i, out->text, &used, constants, n_constants, err);
        } else if (strchr("+-*/^()", ch) != NULL) {
            if (ch == '(') {
                if (depth == 256)
                    st = dm_error_set(err, DM_EINPUT, "brackets nested more than 256 deep");
                else
                    open_at[depth++] = i;
            } else if (ch == ')') {
                if (depth == 0)
                    st = dm_error_set(err, DM_EINPUT, "')' closes no bracket");
                else
                    depth--;
            }
            out->text[used++] = (char)ch;
            i++;
        } else {
            if (ch >= 0x80) { /* one UTF-8 character, shown whole: '²', 'π' */
                size_t n = 1;
                while (n < 4 && ((unsigned char)s[i + n] & 0xC0) == 0x80)
                    n++;
                bool power = n == 2 && ch == 0xC2 &&
                             ((unsigned char)s[i + 1] == 0xB2 || (unsigned char)s[i + 1] == 0xB3);
                st = dm_error_set(err, DM_EINPUT, "unexpected character '%.*s' (a formula is "
                                  "plain ASCII%s)", (int)n, s + i,
                                  power ? ": write a power as x^2" : "");
            } else if (!isprint(ch))
                st = dm_error_set(err, DM_EINPUT, "unexpected control character (byte 0x%02X)",
                                  (unsigned)ch);
            else
                st = dm_error_set(err, DM_EINPUT, "unexpected character '%c'%s", ch,
                                  ch == ',' ? " (functions take one argument; write a power "
                                              "as x^y)" : "");
        }
        if (st != DM_OK)
            *column = (int)start + 1;
    }
    out->text[used] = '\0';
    if (st == DM_OK && depth > 0) {
        *column = (int)open_at[depth - 1] + 1;
        st = dm_error_set(err, DM_EINPUT, "'(' is never closed");
    }
    if (st == DM_OK && !any) {
        *column = 1;
        st = dm_error_set(err, DM_EINPUT, "the formula is empty");
    }
    if (st != DM_OK)
        dm_formula_scan_free(out);
    return st;
}

void dm_formula_scan_free(dm_formula_scan *scan)
{
    free(scan->text);
    free(scan->names);
    memset(scan, 0, sizeof *scan);
}

static bool parses(const char *text)
{
    void *e = evaluator_create((char *)text);
    if (e == NULL)
        return false;
    evaluator_destroy(e);
    return true;
}

/* Whether some completion of the first k characters of formula parses: they as they
 * are, or with an operand, or an operator and an operand, appended, every open bracket
 * closed. buf holds 2 strlen(formula) + 16 characters. */
static bool good_prefix(const char *formula, size_t k, char *buf, size_t size)
{
    static const char *const tails[] = { "", "1", "*1" };
    int depth = 0;
    for (size_t i = 0; i < k; i++)
        depth += formula[i] == '(' ? 1 : formula[i] == ')' ? -1 : 0;
    if (depth < 0)
        return false;
    for (size_t t = 0; t < 3; t++) {
        int n = snprintf(buf, size, "%.*s%s", (int)k, formula, tails[t]);
        for (int d = 0; d < depth && n + 1 < (int)size; d++)
            buf[n++] = ')';
        buf[n] = '\0';
        if (parses(buf))
            return true;
    }
    return false;
}

int dm_formula_error_column(const char *formula)
{
    /* A prefix that no completion parses stays so when it grows (a completion of the
     * longer one completes the shorter), so the shortest is found by bisection: a few
     * dozen parses however long the formula. */
    size_t len = strlen(formula), size = 2 * len + 16;
    char *buf = malloc(size);
    if (buf == NULL)
        return 1;
    size_t lo = 0, hi = len; /* prefix lo is good; the answer lies in (lo, hi] */
    if (good_prefix(formula, len, buf, size)) {
        free(buf);
        return (int)len; /* it ends too soon */
    }
    while (hi - lo > 1) {
        size_t mid = lo + (hi - lo) / 2;
        if (good_prefix(formula, mid, buf, size))
            lo = mid;
        else
            hi = mid;
    }
    free(buf);
    /* the column of the character that made it bad; a blank there means the next one */
    while (hi < len && isspace((unsigned char)formula[hi - 1]))
        hi++;
    return (int)hi;
}

/* ---- the rewrite of libmatheval's output ----
 * Its output has five forms only: a number, a name, name(X), (-X) and (X op Y). */

typedef struct node {
    char kind;              /* 'n' number, 'v' name, 'f' function, '~' negation, or an
                               operator + - * / ^ */
    double value;           /* 'n' */
    char name[DM_FORMULA_NAME_MAX];  /* 'v', 'f' */
    struct node *a, *b;
} node;

static void node_free(node *x)
{
    if (x != NULL) {
        node_free(x->a);
        node_free(x->b);
        free(x);
    }
}

static node *read_node(const char **s, int depth);

static node *read_paren(const char **s, int depth)
{
    node *x = calloc(1, sizeof *x);
    if (x == NULL)
        return NULL;
    (*s)++; /* '(' */
    if (**s == '-' && (isdigit((unsigned char)(*s)[1]) || (*s)[1] == '.')) {
        /* a negative number, printed in brackets ("(-2)") or, when it is -0, not
         * ("(-0*(q^2))": libmatheval brackets a number below 0, and -0 is not) */
        char *end;
        x->a = calloc(1, sizeof *x->a);
        if (x->a == NULL) {
            free(x);
            return NULL;
        }
        x->a->kind = 'n';
        x->a->value = strtod(*s, &end);
        *s = end;
        if (**s == ')') {
            node *number = x->a;
            free(x);
            (*s)++;
            return number;
        }
        if (**s != '\0' && strchr("+-*/^", **s) != NULL) {
            x->kind = *(*s)++;
            x->b = read_node(s, depth + 1);
        }
    } else if (**s == '-') {
        (*s)++;
        x->kind = '~';
        x->a = read_node(s, depth + 1);
    } else {
        x->a = read_node(s, depth + 1);
        if (x->a != NULL && **s != '\0' && strchr("+-*/^", **s) != NULL) {
            x->kind = *(*s)++;
            x->b = read_node(s, depth + 1);
        }
    }
    if (x->a == NULL || (x->kind != '~' && x->b == NULL) || **s != ')') {
        node_free(x);
        return NULL;
    }
    (*s)++;
    return x;
}

static node *read_node(const char **s, int depth)
{
    if (depth > 10000)
        return NULL;
    if (**s == '(')
        return read_paren(s, depth);
    node *x = calloc(1, sizeof *x);
    if (x == NULL)
        return NULL;
    const char *p = *s;
    size_t digits = 0;
    while (isdigit((unsigned char)p[digits]))
        digits++;
    /* a number; libmatheval's constants 2_sqrtpi, 1_pi ... are names */
    if ((digits > 0 || *p == '.') && p[digits] != '_') {
        char *end;
        x->kind = 'n';
        x->value = strtod(p, &end);
        *s = end;
        return x;
    }
    size_t n = 0;
    while (name_char((unsigned char)p[n]))
        n++;
    if (n == 0 || n >= sizeof x->name) {
        free(x);
        return NULL;
    }
    memcpy(x->name, p, n);
    x->kind = 'v';
    *s = p + n;
    if (**s == '(') {
        x->kind = 'f';
        (*s)++;
        x->a = read_node(s, depth + 1);
        if (x->a == NULL || **s != ')') {
            node_free(x);
            return NULL;
        }
        (*s)++;
    }
    return x;
}

static bool is_number(const node *x, double v)
{
    return x->kind == 'n' && x->value == v;
}

/* Replaces *x by its child c (the other child is freed). */
static void keep(node **x, node *c)
{
    node *old = *x;
    if (old->a == c)
        old->a = NULL;
    else
        old->b = NULL;
    node_free(old);
    *x = c;
}

static void make_number(node **x, double v)
{
    node_free((*x)->a);
    node_free((*x)->b);
    (*x)->a = (*x)->b = NULL;
    (*x)->kind = 'n';
    (*x)->value = v;
}

static void simplify(node **x)
{
    node *t = *x;
    if (t->a != NULL)
        simplify(&t->a);
    if (t->b != NULL)
        simplify(&t->b);
    node *a = t->a, *b = t->b;
    switch (t->kind) {
    case '*':
        if (is_number(a, 0) || is_number(b, 0))
            make_number(x, 0.0);
        else if (is_number(a, 1))
            keep(x, b);
        else if (is_number(b, 1))
            keep(x, a);
        break;
    case '+':
        if (is_number(a, 0))
            keep(x, b);
        else if (is_number(b, 0))
            keep(x, a);
        break;
    case '-':
        if (is_number(b, 0)) {
            keep(x, a);
        } else if (is_number(a, 0)) {
            node_free(a);
            t->kind = '~';
            t->a = b;
            t->b = NULL;
        }
        break;
    case '/':
        if (is_number(a, 0))
            make_number(x, 0.0);
        else if (is_number(b, 1))
            keep(x, a);
        break;
    case '^':
        if (is_number(b, 1))
            keep(x, a);
        break;
    case '~':
        if (is_number(a, 0)) {
            make_number(x, 0.0);
        } else if (a->kind == '~') { /* -(-X) is X exactly */
            node *inner = a->a;
            a->a = NULL;
            node_free(t);
            *x = inner;
        }
        break;
    default:
        break;
    }
}

typedef struct printer {
    char *buf;
    size_t used, size;
    bool c, ok;
    dm_formula_map_fn map;
    void *data;
} printer;

static void put(printer *p, const char *text)
{
    size_t n = strlen(text);
    if (p->used + n + 1 > p->size) {
        size_t size = 2 * (p->used + n + 1);
        char *grown = realloc(p->buf, size);
        if (grown == NULL) {
            p->ok = false;
            return;
        }
        p->buf = grown;
        p->size = size;
    }
    memcpy(p->buf + p->used, text, n + 1);
    p->used += n;
}

static void print_node(printer *p, const node *x)
{
    char text[128];
    switch (x->kind) {
    case 'n':
        /* a C literal is a double (1/2 is not integer division) */
        snprintf(text, sizeof text, "%.17g", x->value);
        if (p->c && strpbrk(text, ".en") == NULL)
            strcat(text, ".0");
        put(p, text);
        return;
    case 'v':
        if (!p->c) {
            put(p, x->name);
        } else if (p->map(p->data, x->name, text, sizeof text)) {
            put(p, text);
        } else {
            p->ok = false;
        }
        return;
    case 'f':
        put(p, p->c && strcmp(x->name, "abs") == 0 ? "fabs"
                : p->c && strcmp(x->name, "step") == 0 ? "dm_formula_step" : x->name);
        put(p, "(");
        print_node(p, x->a);
        put(p, ")");
        return;
    case '~':
        put(p, "(-");
        print_node(p, x->a);
        put(p, ")");
        return;
    case '^':
        if (p->c) {
            put(p, "pow(");
            print_node(p, x->a);
            put(p, ", ");
            print_node(p, x->b);
            put(p, ")");
            return;
        }
        break;
    default:
        break;
    }
    put(p, "(");
    print_node(p, x->a);
    snprintf(text, sizeof text, p->c ? " %c " : "%c", x->kind);
    put(p, text);
    print_node(p, x->b);
    put(p, ")");
}

char *dm_formula_rewrite(const char *infix, bool c, dm_formula_map_fn map, void *data,
                         dm_error *err)
{
    const char *s = infix;
    node *root = read_node(&s, 0);
    if (root == NULL || *s != '\0') {
        node_free(root);
        dm_error_set(err, DM_EINPUT, "cannot read the formula library's output '%.60s'",
                     infix);
        return NULL;
    }
    simplify(&root);
    printer p = { .c = c, .ok = true, .map = map, .data = data };
    put(&p, "");
    print_node(&p, root);
    node_free(root);
    if (!p.ok) {
        free(p.buf);
        dm_error_set(err, DM_EINPUT, "cannot write the formula '%.60s' as C", infix);
        return NULL;
    }
    return p.buf;
}
