/* args.c: the argument parser shared by every subcommand (options in `--name VALUE` or
 * `--name=VALUE` form, flags, positional arguments, --help) and the help printer. */
#include "cli_int.h"

#include <stdarg.h>
#include <string.h>
#include <unistd.h>

static int find_opt(const cli_args *a, const char *name, size_t len)
{
    for (size_t i = 0; i < a->nopt; i++)
        if (strlen(a->opt[i]->name) == len && strncmp(a->opt[i]->name, name, len) == 0)
            return (int)i;
    return -1;
}

/* Suggests a known option sharing the longest prefix with an unknown one. */
static const char *suggest(const cli_args *a, const char *name)
{
    const char *best = NULL;
    size_t best_len = 3; /* "--" plus at least two characters in common */
    for (size_t i = 0; i < a->nopt; i++) {
        const char *o = a->opt[i]->name;
        size_t l = 0;
        while (o[l] && name[l] && o[l] == name[l])
            l++;
        if (l > best_len) {
            best_len = l;
            best = o;
        }
    }
    return best;
}

int cli_parse(const cli_cmd *cmd, int argc, char **argv, int first, cli_args *a,
              int *help)
{
    memset(a, 0, sizeof *a);
    a->cmd = cmd;
    *help = 0;
    for (size_t g = 0; g < CLI_MAX_GROUPS && cmd->groups[g]; g++)
        for (const cli_opt *o = cmd->groups[g]->opts; o->name; o++) {
            if (a->nopt >= CLI_MAX_OPTS)
                return cli_fail("internal: too many options for %s", cmd->name);
            a->opt[a->nopt++] = o;
        }
    /* First pass: count values per option so that each gets a slice of valbuf. */
    size_t used = 0;
    int only_pos = 0;
    /* values are stored in order of appearance; vals[i] points into valbuf */
    const char *seen_name[CLI_MAX_VALUES];
    int seen_idx[CLI_MAX_VALUES];
    size_t nseen = 0;
    for (int i = first; i < argc; i++) {
        const char *s = argv[i];
        if (!only_pos && strcmp(s, "--") == 0) {
            only_pos = 1;
            continue;
        }
        if (!only_pos && (strcmp(s, "--help") == 0 || strcmp(s, "-h") == 0)) {
            *help = 1;
            return CLI_OK;
        }
        if (!only_pos && s[0] == '-' && s[1] != '\0' &&
            !(s[1] == '.' || (s[1] >= '0' && s[1] <= '9'))) {
            const char *eq = strchr(s, '=');
            size_t len = eq ? (size_t)(eq - s) : strlen(s);
            int k = find_opt(a, s, len);
            if (k < 0) {
                char shown[128];
                snprintf(shown, sizeof shown, "%.*s", (int)(len < 100 ? len : 100), s);
                const char *sug = suggest(a, shown);
                if (sug)
                    return cli_fail("%s: unknown option %s (did you mean %s? see "
                                    "dipolize %s --help)",
                                    cmd->name, shown, sug, cmd->name);
                return cli_fail("%s: unknown option %s (see dipolize %s --help)",
                                cmd->name, shown, cmd->name);
            }
            const cli_opt *o = a->opt[k];
            const char *val;
            if (o->meta == NULL) {
                if (eq)
                    return cli_fail("%s: option %s takes no value", cmd->name, o->name);
                val = "";
            } else if (eq) {
                val = eq + 1;
            } else {
                if (i + 1 >= argc)
                    return cli_fail("%s: option %s needs a value (%s)", cmd->name,
                                    o->name, o->meta);
                val = argv[++i];
            }
            if (!o->repeat && a->nvals[k] > 0 && o->meta)
                return cli_fail("%s: option %s given twice", cmd->name, o->name);
            if (nseen >= CLI_MAX_VALUES)
                return cli_fail("%s: too many options", cmd->name);
            seen_name[nseen] = val;
            seen_idx[nseen] = k;
            nseen++;
            a->nvals[k]++;
            continue;
        }
        if (a->npos >= CLI_MAX_POS)
            return cli_fail("%s: too many arguments", cmd->name);
        a->pos[a->npos++] = s;
    }
    /* Lay the values out per option, keeping their order. */
    for (size_t k = 0; k < a->nopt; k++) {
        a->vals[k] = &a->valbuf[used];
        size_t n = 0;
        for (size_t j = 0; j < nseen; j++)
            if (seen_idx[j] == (int)k)
                a->valbuf[used + n++] = seen_name[j];
        used += n;
    }
    if (a->npos < cmd->min_pos || a->npos > cmd->max_pos) {
        if (a->npos < cmd->min_pos)
            return cli_fail("%s: missing argument (usage: dipolize %s %s)", cmd->name,
                            cmd->name, cmd->usage);
        return cli_fail("%s: unexpected argument \"%s\" (usage: dipolize %s %s)",
                        cmd->name, a->pos[cmd->max_pos], cmd->name, cmd->usage);
    }
    a->quiet = cli_flag(a, "--quiet");
    a->progress = !a->quiet && isatty(STDERR_FILENO);
    return CLI_OK;
}

static int index_of(const cli_args *a, const char *name)
{
    return find_opt(a, name, strlen(name));
}

const char *cli_get(const cli_args *a, const char *name)
{
    int k = index_of(a, name);
    if (k < 0 || a->nvals[k] == 0)
        return NULL;
    return a->vals[k][a->nvals[k] - 1];
}

size_t cli_count(const cli_args *a, const char *name)
{
    int k = index_of(a, name);
    return k < 0 ? 0 : a->nvals[k];
}

const char *cli_value_at(const cli_args *a, const char *name, size_t i)
{
    int k = index_of(a, name);
    if (k < 0 || i >= a->nvals[k])
        return NULL;
    return a->vals[k][i];
}

int cli_flag(const cli_args *a, const char *name)
{
    return cli_count(a, name) > 0;
}

/* Help text width: fits an 80-column terminal. */
#define HELP_WIDTH 79
#define HELP_INDENT 29
/* Source lines at least this long that end in a single line break are hard-wrapped
 * paragraph text. */
#define HELP_SOFT_BREAK 70

/* Prints `text` word-wrapped: the first line continues at column `col`, the others start
 * at column `indent`; existing line breaks are kept. */
static void wrap_print(FILE *f, const char *text, size_t col, size_t indent)
{
    const char *p = text;
    size_t pending = 0; /* blanks typed before the next word, kept unless we wrap */
    const char *line = text;
    while (*p) {
        /* A line break after a long source line, followed by more text, was only a
         * hard wrap of a paragraph: rewrap it. Short lines (tables), blank lines and
         * indented lines keep their breaks. */
        if (*p == '\n' && (size_t)(p - line) >= HELP_SOFT_BREAK && p[1] != '\0' &&
            p[1] != '\n' && p[1] != ' ') {
            line = p + 1;
            pending++;
            p++;
            continue;
        }
        if (*p == '\n') {
            line = p + 1;
            fputc('\n', f);
            for (size_t i = 0; i < indent; i++)
                fputc(' ', f);
            col = indent;
            pending = 0;
            p++;
            continue;
        }
        if (*p == ' ') {
            pending++;
            p++;
            continue;
        }
        size_t wl = strcspn(p, " \n");
        if (col > indent && col + pending + wl > HELP_WIDTH) {
            fputc('\n', f);
            for (size_t i = 0; i < indent; i++)
                fputc(' ', f);
            col = indent;
            pending = 0;
        }
        for (; pending > 0; pending--, col++)
            fputc(' ', f);
        fwrite(p, 1, wl, f);
        col += wl;
        p += wl;
    }
    fputc('\n', f);
}

void cli_print_help(const cli_cmd *cmd, FILE *f)
{
    fprintf(f, "Usage: dipolize %s ", cmd->name);
    wrap_print(f, cmd->usage, 16 + strlen(cmd->name), 8);
    fputc('\n', f);
    wrap_print(f, cmd->summary, 0, 0);
    if (cmd->details) {
        fputc('\n', f);
        wrap_print(f, cmd->details, 0, 0);
    }
    for (size_t g = 0; g < CLI_MAX_GROUPS && cmd->groups[g]; g++) {
        const cli_group *grp = cmd->groups[g];
        fprintf(f, "\n%s:\n", grp->title);
        for (const cli_opt *o = grp->opts; o->name; o++) {
            char head[64], text[1024];
            snprintf(head, sizeof head, "%s%s%s", o->name, o->meta ? " " : "",
                     o->meta ? o->meta : "");
            snprintf(text, sizeof text, "%s%s", o->help,
                     o->repeat ? " (repeatable)" : "");
            fprintf(f, "  %-26s ", head);
            size_t col = 2 + (strlen(head) > 26 ? strlen(head) : 26) + 1;
            wrap_print(f, text, col, HELP_INDENT);
        }
    }
    fprintf(f, "  %-26s %s\n", "--help", "this text");
    /* The example as a shell command, continued with backslashes to fit the width. */
    fputs("\nExample:\n  ", f);
    size_t col = 2;
    for (const char *p = cmd->example; *p;) {
        size_t wl = strcspn(p, " ");
        if (col > 2 && col + 1 + wl + 2 > HELP_WIDTH) {
            fputs(" \\\n     ", f);
            col = 5;
        } else if (col > 2) {
            fputc(' ', f);
            col++;
        }
        fwrite(p, 1, wl, f);
        col += wl;
        p += wl;
        while (*p == ' ')
            p++;
    }
    fputc('\n', f);
}

void cli_progress(const cli_args *a, const char *fmt, ...)
{
    if (!a->progress)
        return;
    va_list ap;
    va_start(ap, fmt);
    fputs("dipolize: ", stderr);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
}
