/* src/cli/cmd_completion.c - the `completion` command: the bash and zsh completion scripts, generated from the option tables */
#include <string.h>

#include "cli.h"

typedef struct completion_args {
	bool unused; /* the command has no options of its own beyond --help */
} completion_args;

static const hb_opt completion_table[] = {
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_completion = {
	.name = "completion",
	.usage = "bash|zsh",
	.about = "Prints a bash or zsh completion script for every command, option and accepted word,\n"
		 "generated from the same option tables that parse the command lines, e.g.\n"
		 "  eval \"$(henrybench completion bash)\"\n"
		 "  henrybench completion zsh > ~/.zfunc/_henrybench   (a directory in $fpath)\n",
	.opts = completion_table,
	.max_operands = 1,
	.operands = "bash zsh",
};

int hb_cmd_completion(int argc, char **argv)
{
	completion_args a = { 0 };
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_completion, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	if (r.first >= argc) {
		hb_cli_error("completion needs a SHELL: accepted bash or zsh");
		return HB_EXIT_USAGE;
	}
	if (strcmp(argv[r.first], "bash") == 0) {
		hb_opts_completion_bash(stdout);
	} else if (strcmp(argv[r.first], "zsh") == 0) {
		hb_opts_completion_zsh(stdout);
	} else {
		hb_cli_error("completion: shell '%s' not supported: accepted bash or zsh", argv[r.first]);
		return HB_EXIT_USAGE;
	}
	return fflush(stdout) == 0 ? HB_EXIT_OK : HB_EXIT_RUNTIME;
}
