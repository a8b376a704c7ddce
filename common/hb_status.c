/* common/hb_status.c - names for the shared status codes */
#include "hb_status.h"

const char *hb_status_name(int status)
{
	switch (status) {
	case HB_OK: return "ok";
	case HB_ERR_ARG: return "bad argument";
	case HB_ERR_NOMEM: return "out of memory";
	case HB_ERR_IO: return "i/o error";
	case HB_ERR_TIMEOUT: return "timeout";
	case HB_ERR_CLOSED: return "link lost";
	case HB_ERR_PROTOCOL: return "protocol error";
	case HB_ERR_INSTRUMENT: return "instrument error";
	case HB_ERR_PROFILE: return "profile error";
	case HB_ERR_DB: return "store error";
	case HB_ERR_DB_FULL: return "disk full";
	case HB_ERR_FIT: return "fit failed";
	case HB_ERR_DATA: return "unusable data";
	case HB_ERR_LIMIT: return "safety limit";
	case HB_ERR_INTERRUPTED: return "interrupted";
	case HB_ERR_COMPLIANCE: return "supply in compliance";
	case HB_ERR_NOTFOUND: return "not found";
	case HB_ERR_UNSUPPORTED: return "unsupported";
	case HB_ERR_OVERLOAD: return "overload";
	case HB_ERR_BUSY: return "store busy";
	default: return "unknown error";
	}
}
