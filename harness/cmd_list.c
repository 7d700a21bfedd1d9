/* cmd_list.c — placeholder; the full listing lands with issue 2. */
#include "cli.h"
#include "problem.h"

int dm_cmd_list(int argc, char **argv)
{
    for (size_t i = 0; i < dm_problem_count; i++)
        printf("%s\n", dm_problems[i]->id);
    return 0;
}
