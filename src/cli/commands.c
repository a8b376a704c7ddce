/* src/cli/commands.c - the command table: name, entry point, one-line summary and option table of every command */
#include "cli.h"

const hb_command hb_commands[] = {
	{ "ports", hb_cmd_ports, "list serial ports", &hb_opts_ports },
	{ "identify", hb_cmd_identify, "ask instruments who they are (*IDN?, profile, error queue)", &hb_opts_identify },
	{ "sim", hb_cmd_sim, "serve the simulated bench over TCP or a pseudo-terminal", &hb_opts_sim },
	{ "demo", hb_cmd_demo, "run the main job on the simulated bench", &hb_opts_demo },
	{ "core", hb_cmd_core, "core geometry: effective parameters, expected inductance", &hb_opts_core },
	{ "sweep", hb_cmd_sweep, "measure L against DC bias, store every point, fit and judge", &hb_opts_sweep },
	{ "fsweep", hb_cmd_fsweep, "measure L and R against frequency (optionally under bias)", &hb_opts_fsweep },
	{ "fit", hb_cmd_fit, "fit a stored sweep again and store the fit", &hb_opts_fit },
	{ "plan", hb_cmd_plan, "ISO 2859-1 sampling plan for a lot: code letter, sample size, Ac/Re", &hb_opts_plan },
	{ "sweeps", hb_cmd_sweeps, "list stored sweeps (filters: part, unit, lot, status, kind)", &hb_opts_sweeps },
	{ "show", hb_cmd_show, "one stored sweep: settings and points (text, JSON, CSV)", &hb_opts_show },
	{ "part", hb_cmd_part, "part specs: add, list, show, edit", &hb_opts_part },
	{ "inspect", hb_cmd_inspect, "inspect a lot by ISO 2859-1 sampling: sweep, judge, tally, decide (resumable)", &hb_opts_inspect },
	{ "history", hb_cmd_history, "a part's measured units, lot statistics with Cpk, trend across lots", &hb_opts_history },
	{ "compare", hb_cmd_compare, "stored bias sweeps side by side: L0, drop currents, mu_e, gap, verdict", &hb_opts_compare },
	{ "report", hb_cmd_report, "write an HTML record of a sweep, a lot or a part (inline plots)", &hb_opts_report },
	{ "export", hb_cmd_export, "stored sweeps as CSV or JSON, SI units in every column", &hb_opts_export },
	{ "import", hb_cmd_import, "store a sweep a meter logged on its own (CSV), then fit it", &hb_opts_import },
	{ "instrument", hb_cmd_instrument, "the instrument register: list, show, edit calibration; affected records", &hb_opts_instrument },
	{ "fixture", hb_cmd_fixture, "open/short compensation of a test fixture, recorded for the sweeps", &hb_opts_fixture },
	{ "completion", hb_cmd_completion, "print a bash completion script generated from the option tables", &hb_opts_completion },
	{ NULL, NULL, NULL, NULL },
};
