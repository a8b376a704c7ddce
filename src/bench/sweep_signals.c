/* src/bench/sweep_signals.c - SIGINT, SIGTERM and SIGHUP become a flag the sweep engine polls: the process is never killed with current flowing by them */
#include <signal.h>
#include <string.h>

#include "sweep.h"
#include "sweep_internal.h"

/* ------------------------------------------------------------------ */
/* signals                                                             */
/* ------------------------------------------------------------------ */

volatile sig_atomic_t hb__sweep_pending_signal;
static volatile sig_atomic_t signal_count;
static struct sigaction saved_int, saved_term, saved_hup;
static int signals_installed;

static void on_signal(int signo)
{
	if (!hb__sweep_pending_signal)
		hb__sweep_pending_signal = signo;
	signal_count++;
}

void hb_sweep_install_signals(void)
{
	if (signals_installed)
		return;
	struct sigaction sa;
	memset(&sa, 0, sizeof sa);
	sa.sa_handler = on_signal;
	sigemptyset(&sa.sa_mask);
	/* No SA_RESTART: a blocked wait returns early and the engine looks
	 * at the flag sooner. The link layer retries EINTR with the time left. */
	sa.sa_flags = 0;
	sigaction(SIGINT, &sa, &saved_int);
	sigaction(SIGTERM, &sa, &saved_term);
	sigaction(SIGHUP, &sa, &saved_hup);
	signals_installed = 1;
}

void hb_sweep_restore_signals(void)
{
	if (!signals_installed)
		return;
	sigaction(SIGINT, &saved_int, NULL);
	sigaction(SIGTERM, &saved_term, NULL);
	sigaction(SIGHUP, &saved_hup, NULL);
	signals_installed = 0;
}

int hb_sweep_pending_signal(void)
{
	return hb__sweep_pending_signal;
}

void hb_sweep_clear_signal(void)
{
	hb__sweep_pending_signal = 0;
	signal_count = 0;
}

