/* order_conditions.c — rooted trees and elementary weights (order_conditions.h). */
#include <math.h>
#include <stdbool.h>
#include <string.h>

#include "order_conditions.h"

typedef __float128 quad;

/* Every rooted tree with at most DM_ORDER_MAX vertices (115 with 8 vertices, 286 in all),
 * each as the list of its root's subtrees (indices into the same list, non-increasing,
 * so each tree appears once). Built once; setup work only. */
enum { MAX_TREES = 300, MAX_CHILDREN = DM_ORDER_MAX };

typedef struct tree {
    int order;
    int n_children;
    int child[MAX_CHILDREN];
    double gamma;
} tree;

/* Built on first use; the suite reader checks user tables before any run thread starts. */
static tree trees[MAX_TREES];
static int n_trees;
static int first_of_order[DM_ORDER_MAX + 2]; /* trees of order n: [first[n], first[n+1]) */

/* Appends every tree of order `order` whose root has the children chosen so far plus
 * children with indices <= max_index and orders summing to `left`. */
static void grow(int order, int left, int max_index, tree *partial)
{
    if (left == 0) {
        tree t = *partial;
        t.order = order;
        t.gamma = order;
        for (int k = 0; k < t.n_children; k++)
            t.gamma *= trees[t.child[k]].gamma;
        trees[n_trees++] = t;
        return;
    }
    for (int i = max_index; i >= 0; i--) {
        if (trees[i].order > left)
            continue;
        partial->child[partial->n_children++] = i;
        grow(order, left - trees[i].order, i, partial);
        partial->n_children--;
    }
}

static void build_trees(void)
{
    if (n_trees > 0)
        return;
    first_of_order[1] = 0;
    trees[n_trees++] = (tree){ .order = 1, .n_children = 0, .gamma = 1.0 };
    for (int n = 2; n <= DM_ORDER_MAX + 1; n++) {
        first_of_order[n] = n_trees;
        if (n > DM_ORDER_MAX)
            break;
        tree partial = { 0 };
        grow(n, n - 1, n_trees - 1, &partial);
    }
}

size_t dm_rooted_tree_count(int n)
{
    build_trees();
    if (n < 1 || n > DM_ORDER_MAX)
        return 0;
    return (size_t)(first_of_order[n + 1] - first_of_order[n]);
}

void dm_rk_order(const double *a, const double *b, int s, int max_order, double tol,
                 dm_order_report *report)
{
    build_trees();
    memset(report, 0, sizeof *report);
    if (s < 1 || s > DM_STAGES_MAX)
        return;
    if (max_order > DM_ORDER_MAX)
        max_order = DM_ORDER_MAX;
    /* Phi_i(t) for every tree up to max_order, tree by tree (children come first) */
    quad phi[MAX_TREES][DM_STAGES_MAX];
    report->checked_to = max_order;
    bool holds = true;
    int last = first_of_order[max_order + 1];
    for (int t = 0; t < last; t++) {
        for (int i = 0; i < s; i++) {
            quad prod = 1;
            for (int k = 0; k < trees[t].n_children; k++) {
                quad sum = 0;
                for (int j = 0; j < s; j++)
                    sum += (quad)a[i * s + j] * phi[trees[t].child[k]][j];
                prod *= sum;
            }
            phi[t][i] = prod;
        }
        quad weight = 0;
        for (int i = 0; i < s; i++)
            weight += (quad)b[i] * phi[t][i];
        double residual = (double)(weight * (quad)trees[t].gamma - 1);
        int n = trees[t].order;
        report->worst[n] = fmax(report->worst[n], fabs(residual));
    }
    for (int n = 1; n <= max_order && holds; n++) {
        holds = report->worst[n] <= tol;
        if (holds)
            report->order = n;
    }
}
