/* common/sha256.c - SHA-256 through OpenSSL's libcrypto EVP interface (no home-made digest) */
#include <stdio.h>
#include <stdlib.h>

#include <openssl/evp.h>

#include "hb_sha256.h"

struct hb_sha256 {
	EVP_MD_CTX *ctx;
	int status;
};

static void to_hex(const unsigned char *md, unsigned n, char out[HB_SHA256_HEX_LEN])
{
	static const char hex[] = "0123456789abcdef";
	for (unsigned i = 0; i < n && i < 32; i++) {
		out[2 * i] = hex[md[i] >> 4];
		out[2 * i + 1] = hex[md[i] & 15];
	}
	out[64] = '\0';
}

int hb_sha256_hex(const void *data, size_t len, char out[HB_SHA256_HEX_LEN])
{
	unsigned char md[EVP_MAX_MD_SIZE];
	unsigned n = 0;
	if (!EVP_Digest(data, len, md, &n, EVP_sha256(), NULL) || n != 32)
		return HB_ERR_IO;
	to_hex(md, n, out);
	return HB_OK;
}

hb_sha256 *hb_sha256_create(void)
{
	hb_sha256 *h = calloc(1, sizeof *h);
	if (!h)
		return NULL;
	h->ctx = EVP_MD_CTX_new();
	if (!h->ctx || !EVP_DigestInit_ex(h->ctx, EVP_sha256(), NULL)) {
		hb_sha256_free(h);
		return NULL;
	}
	return h;
}

int hb_sha256_update(hb_sha256 *h, const void *data, size_t len)
{
	if (!h)
		return HB_ERR_ARG;
	if (h->status == HB_OK && len > 0 && !EVP_DigestUpdate(h->ctx, data, len))
		h->status = HB_ERR_IO;
	return h->status;
}

int hb_sha256_finish(hb_sha256 *h, char out[HB_SHA256_HEX_LEN])
{
	if (!h)
		return HB_ERR_ARG;
	unsigned char md[EVP_MAX_MD_SIZE];
	unsigned n = 0;
	int rc = h->status;
	if (rc == HB_OK && (!EVP_DigestFinal_ex(h->ctx, md, &n) || n != 32))
		rc = HB_ERR_IO;
	if (rc == HB_OK)
		to_hex(md, n, out);
	hb_sha256_free(h);
	return rc;
}

void hb_sha256_free(hb_sha256 *h)
{
	if (!h)
		return;
	EVP_MD_CTX_free(h->ctx);
	free(h);
}

int hb_sha256_file(const char *path, char out[HB_SHA256_HEX_LEN])
{
	FILE *f = fopen(path, "rb");
	if (!f)
		return HB_ERR_IO;
	hb_sha256 *h = hb_sha256_create();
	int rc = h ? HB_OK : HB_ERR_NOMEM;
	unsigned char buf[65536];
	size_t got;
	while (rc == HB_OK && (got = fread(buf, 1, sizeof buf, f)) > 0)
		rc = hb_sha256_update(h, buf, got);
	if (rc == HB_OK && ferror(f))
		rc = HB_ERR_IO;
	fclose(f);
	if (rc != HB_OK) {
		hb_sha256_free(h);
		return rc;
	}
	return hb_sha256_finish(h, out);
}
