/* common/hb_sha256.h - SHA-256 (FIPS 180-4) of a buffer, a file or a stream of pieces, as lower-case hex, through libcrypto */
#ifndef HB_SHA256_H
#define HB_SHA256_H

#include <stddef.h>

#include "hb_status.h"

enum { HB_SHA256_HEX_LEN = 65 }; /* 64 hex digits and the NUL */

int hb_sha256_hex(const void *data, size_t len, char out[HB_SHA256_HEX_LEN]);
/* The whole file as it is on disk; HB_ERR_IO if it cannot be read. */
int hb_sha256_file(const char *path, char out[HB_SHA256_HEX_LEN]);

/* Incremental: create, feed pieces, finish (writes the hex and frees); _free(NULL) is a no-op. */
typedef struct hb_sha256 hb_sha256;
hb_sha256 *hb_sha256_create(void);
int hb_sha256_update(hb_sha256 *h, const void *data, size_t len);
int hb_sha256_finish(hb_sha256 *h, char out[HB_SHA256_HEX_LEN]);
void hb_sha256_free(hb_sha256 *h);

#endif
