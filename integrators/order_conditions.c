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

/* ---- Runge-Kutta-Nystrom tables ----
 * Special Nystrom trees: a fat root (an f) with branches, each a meagre leaf (a y' of
 * the start: the weight c_i) or a meagre vertex over one fat subtree (a y' that has
 * moved: sum_j abar_ij Phi_j of the subtree). rho counts every vertex; gamma is the
 * usual density of the tree with all its vertices. Built once, by size, each multiset of
 * branches once (indices non-increasing). */
enum { MAX_SN = 1024 };

typedef struct sn_branch {
    int size;
    int child;       /* fat tree under the meagre vertex, or -1 for a leaf */
    double gamma;
} sn_branch;

typedef struct sn_tree {
    int size;
    int n_branches;
    int branch[DM_ORDER_MAX];
    double gamma;
} sn_tree;

static sn_branch sn_branches[MAX_SN];
static sn_tree sn_trees[MAX_SN];
static int n_sn_branches, n_sn_trees;

static void sn_grow(int size, int left, int max_index, sn_tree *partial)
{
    if (left == 0) {
        sn_tree t = *partial;
        t.size = size;
        t.gamma = size;
        for (int k = 0; k < t.n_branches; k++)
            t.gamma *= sn_branches[t.branch[k]].gamma;
        if (n_sn_trees < MAX_SN)
            sn_trees[n_sn_trees++] = t;
        return;
    }
    for (int i = max_index; i >= 0; i--) {
        if (sn_branches[i].size > left)
            continue;
        partial->branch[partial->n_branches++] = i;
        sn_grow(size, left - sn_branches[i].size, i, partial);
        partial->n_branches--;
    }
}

static void build_sn_trees(void)
{
    if (n_sn_trees > 0)
        return;
    for (int n = 1; n <= DM_ORDER_MAX; n++) {
        /* the branches of size n - 1 exist once the fat trees of size n - 2 do */
        if (n == 2)
            sn_branches[n_sn_branches++] = (sn_branch){ .size = 1, .child = -1, .gamma = 1 };
        for (int t = 0; n >= 3 && t < n_sn_trees; t++)
            if (sn_trees[t].size == n - 2 && n_sn_branches < MAX_SN)
                sn_branches[n_sn_branches++] = (sn_branch){
                    .size = n - 1, .child = t, .gamma = (n - 1) * sn_trees[t].gamma };
        sn_tree partial = { 0 };
        sn_grow(n, n - 1, n_sn_branches - 1, &partial);
    }
}

size_t dm_nystrom_tree_count(int n)
{
    build_sn_trees();
    size_t count = 0;
    for (int t = 0; t < n_sn_trees; t++)
        count += sn_trees[t].size == n;
    return count;
}

void dm_rkn_order(const double *abar, const double *bbar, const double *b, const double *c,
                  int s, int max_order, double tol, dm_order_report *report)
{
    build_sn_trees();
    memset(report, 0, sizeof *report);
    if (s < 1 || s > DM_STAGES_MAX)
        return;
    if (max_order > DM_ORDER_MAX)
        max_order = DM_ORDER_MAX;
    report->checked_to = max_order;
    static quad phi[MAX_SN][DM_STAGES_MAX], branch[MAX_SN][DM_STAGES_MAX];
    /* trees and branches were made in order of size: every part before its use */
    int next_branch = 0;
    for (int t = 0; t < n_sn_trees && sn_trees[t].size <= max_order; t++) {
        for (; next_branch < n_sn_branches &&
               sn_branches[next_branch].size <= sn_trees[t].size - 1; next_branch++) {
            const sn_branch *br = &sn_branches[next_branch];
            for (int i = 0; i < s; i++) {
                quad sum = 0;
                for (int j = 0; br->child >= 0 && j < s; j++)
                    sum += (quad)abar[i * s + j] * phi[br->child][j];
                branch[next_branch][i] = br->child < 0 ? (quad)c[i] : sum;
            }
        }
        const sn_tree *tr = &sn_trees[t];
        quad wb = 0, wbbar = 0;
        for (int i = 0; i < s; i++) {
            quad prod = 1;
            for (int k = 0; k < tr->n_branches; k++)
                prod *= branch[tr->branch[k]][i];
            phi[t][i] = prod;
            wb += (quad)b[i] * prod;
            wbbar += (quad)bbar[i] * prod;
        }
        /* y1' needs sum b Phi = 1 / gamma up to order p; y1 needs
         * sum bbar Phi = 1 / ((rho + 1) gamma) up to order p - 1 */
        int n = tr->size;
        report->worst[n] = fmax(report->worst[n], fabs((double)(wb * (quad)tr->gamma - 1)));
        if (n + 1 <= max_order)
            report->worst[n + 1] = fmax(report->worst[n + 1],
                                        fabs((double)(wbbar * (quad)((n + 1) * tr->gamma) - 1)));
    }
    bool holds = true;
    for (int n = 1; n <= max_order && holds; n++) {
        holds = report->worst[n] <= tol;
        if (holds)
            report->order = n;
    }
}
