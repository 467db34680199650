/* wisdom.c: the planner options --plan and --wisdom shared by every solving command.
 * --plan chooses FFTW's planner effort (estimate by default: the plans then depend only
 * on the sizes, so identical inputs give identical bits); --wisdom FILE loads FFTW
 * wisdom before any planning and saves it, with whatever was planned, when the program
 * ends, so that a batch of jobs measures its plans once (see dpz_wisdom.h). */
#include "cli_int.h"

#include <stdlib.h>
#include <string.h>

#include "dpz_wisdom.h"

static char wisdom_path[4096];

/* Saves at exit: every operator of the run has been planned by then. A failure to save
 * is reported but does not change the exit code (the results are complete). */
static void save_wisdom(void)
{
    dpz_err e;
    if (wisdom_path[0] && dpz_wisdom_save(wisdom_path, &e) != DPZ_OK)
        fprintf(stderr, "dipolize: warning: %s\n", e.msg);
}

int cli_plan_options(const cli_args *a, dpz_setup *s)
{
    const char *v = cli_get(a, "--plan");
    if (v) {
        if (strcmp(v, "estimate") == 0)
            s->op.plan = DPZ_PLAN_ESTIMATE;
        else if (strcmp(v, "measure") == 0)
            s->op.plan = DPZ_PLAN_MEASURE;
        else if (strcmp(v, "patient") == 0)
            s->op.plan = DPZ_PLAN_PATIENT;
        else
            return cli_fail("%s: --plan %s: choose estimate, measure or patient",
                            a->cmd->name, v);
    }
    if ((v = cli_get(a, "--wisdom"))) {
        if (!*v || strlen(v) >= sizeof wisdom_path - 32)
            return cli_fail("%s: --wisdom: give a file name", a->cmd->name);
        dpz_err e;
        int loaded = 0;
        if (dpz_wisdom_load(v, &loaded, &e) != DPZ_OK)
            return cli_fail("%s: --wisdom: %s", a->cmd->name, e.msg);
        if (!wisdom_path[0] && atexit(save_wisdom) != 0)
            return cli_fail("%s: --wisdom: cannot register the save at exit",
                            a->cmd->name);
        memcpy(wisdom_path, v, strlen(v) + 1);
    }
    return CLI_OK;
}
