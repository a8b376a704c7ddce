/* src/io/import_decode.c - a meter log's bytes made UTF-8 text (BOMs, UTF-16 either way) and its header line found below any metadata */
#include <errno.h>
#include <iconv.h>
#include <stdbool.h>
#include <stdlib.h>
#include <string.h>

#include "../../common/hb_text.h"
#include "csv.h"

/* UTF-16 without a BOM: a text of mostly ASCII has a NUL in every other
 * byte, on the odd side for little-endian, the even for big-endian. */
static const char *utf16_guess(const unsigned char *s, size_t len)
{
	size_t n = len < 512 ? len & ~(size_t)1 : 512, even = 0, odd = 0;
	if (n < 4)
		return NULL;
	for (size_t i = 0; i < n; i += 2) {
		even += s[i] == 0;
		odd += s[i + 1] == 0;
	}
	if (odd * 10 >= n / 2 * 8 && even == 0)
		return "UTF-16LE";
	if (even * 10 >= n / 2 * 8 && odd == 0)
		return "UTF-16BE";
	return NULL;
}

static int convert(const char *from, const char *in, size_t inlen, char **out, size_t *outlen, char *err, size_t errlen)
{
	iconv_t cd = iconv_open("UTF-8", from);
	if (cd == (iconv_t)-1) {
		hb_set_err(err, errlen, "cannot convert %s text: %s", from, strerror(errno));
		return HB_ERR_IO;
	}
	/* Each UTF-16 unit becomes at most 3 UTF-8 bytes (a pair, 4 for 4). */
	size_t cap = inlen / 2 * 3 + 4;
	char *buf = malloc(cap + 1);
	if (!buf) {
		iconv_close(cd);
		hb_set_err(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	char *ip = (char *)in, *op = buf;
	size_t il = inlen, ol = cap;
	int rc = HB_OK;
	if (iconv(cd, &ip, &il, &op, &ol) == (size_t)-1) {
		/* The byte offset of the bad unit, counted in the original file. */
		hb_set_err(err, errlen, "the file is %s but byte %zu is not valid %s (%s)", from, (size_t)(ip - in), from,
			   errno == EINVAL ? "cut off at the end" : "a broken character");
		rc = HB_ERR_ARG;
	}
	iconv_close(cd);
	if (rc != HB_OK) {
		free(buf);
		return rc;
	}
	*op = '\0';
	*out = buf;
	*outlen = (size_t)(op - buf);
	return HB_OK;
}

int csv_decode_text(char **data, size_t *len, const char **encoding, char *err, size_t errlen)
{
	const unsigned char *s = (const unsigned char *)*data;
	const char *from = NULL;
	size_t bom = 0;
	*encoding = "UTF-8";
	if (*len >= 3 && s[0] == 0xEF && s[1] == 0xBB && s[2] == 0xBF) {
		memmove(*data, *data + 3, *len - 3 + 1);
		*len -= 3;
		*encoding = "UTF-8 with BOM";
		return HB_OK;
	}
	if (*len >= 2 && s[0] == 0xFF && s[1] == 0xFE) {
		from = "UTF-16LE";
		bom = 2;
	} else if (*len >= 2 && s[0] == 0xFE && s[1] == 0xFF) {
		from = "UTF-16BE";
		bom = 2;
	} else {
		from = utf16_guess(s, *len);
	}
	if (!from)
		return HB_OK;
	char *out = NULL;
	size_t outlen = 0;
	int rc = convert(from, *data + bom, *len - bom, &out, &outlen, err, errlen);
	if (rc != HB_OK)
		return rc;
	free(*data);
	*data = out;
	*len = outlen;
	*encoding = bom ? (from[6] == 'L' ? "UTF-16LE with BOM" : "UTF-16BE with BOM") : from;
	return HB_OK;
}

const char *csv_line_at(const char *s, size_t len, int line)
{
	const char *p = s, *end = s + len;
	for (int k = 1; k < line && p < end; k++) {
		const char *nl = memchr(p, '\n', (size_t)(end - p));
		if (!nl)
			return end;
		p = nl + 1;
	}
	return p;
}
