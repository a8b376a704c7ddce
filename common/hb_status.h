/* common/hb_status.h - the one status enum every layer returns: 0 is success, errors are negative */
#ifndef HB_STATUS_H
#define HB_STATUS_H

typedef enum hb_status {
	HB_OK = 0,
	HB_ERR_ARG = -1,          /* bad argument or malformed input */
	HB_ERR_NOMEM = -2,
	HB_ERR_IO = -3,           /* operating-system I/O failure */
	HB_ERR_TIMEOUT = -4,      /* no complete reply before the deadline */
	HB_ERR_CLOSED = -5,       /* link lost: EOF, reset, hang-up */
	HB_ERR_PROTOCOL = -6,     /* reply of the wrong shape: garbled, shifted, unexpected */
	HB_ERR_INSTRUMENT = -7,   /* the instrument reported an error */
	HB_ERR_PROFILE = -8,      /* dialect profile missing or malformed */
	HB_ERR_DB = -9,           /* store failure */
	HB_ERR_DB_FULL = -10,     /* disk or quota full: nothing further can be stored */
	HB_ERR_FIT = -11,         /* a fit did not converge or converged to a wrong point */
	HB_ERR_DATA = -12,        /* data unfit for the computation: too few points, NaN, ... */
	HB_ERR_LIMIT = -13,       /* a safety limit is missing or would be exceeded */
	HB_ERR_INTERRUPTED = -14, /* stopped by a signal or by the operator */
	HB_ERR_COMPLIANCE = -15,  /* the supply left constant-current regulation */
	HB_ERR_NOTFOUND = -16,
	HB_ERR_UNSUPPORTED = -17, /* the instrument or its profile lacks this operation */
	HB_ERR_OVERLOAD = -18,    /* the instrument returned its overload / not-a-number value */
	HB_ERR_BUSY = -19         /* the store stayed locked longer than the busy time-out */
} hb_status;

/* Short stable name, e.g. "timeout", for messages and JSON. */
const char *hb_status_name(int status);

#endif
