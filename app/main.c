/* main.c — the driftmark executable is only the command line over the library. */
#include "cli.h"

int main(int argc, char **argv)
{
    return dm_cli_main(argc, argv);
}
