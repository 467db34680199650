/* main.c: the dipolize program's entry point; everything else lives in cli.c so that the
 * command-line layer can also be driven from tests. */
#include "cli_int.h"

int main(int argc, char **argv)
{
    return dpz_cli_main(argc, argv);
}
