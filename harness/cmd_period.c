/* cmd_period.c — placeholder; lands with issue 2. */
#include "cli.h"

int dm_cmd_period(int argc, char **argv)
{
    return dm_cli_usage_error("period", "not built yet");
}
