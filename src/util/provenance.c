#include <stdio.h>
#include <time.h>

#include <nettle/sha2.h>

#include "lopside/util/provenance.h"

void lop_provenance_fill(lop_provenance *prov, const char *path, const char *text,
                         size_t len)
{
    struct sha256_ctx ctx;
    uint8_t digest[SHA256_DIGEST_SIZE];
    sha256_init(&ctx);
    sha256_update(&ctx, len, (const uint8_t *)text);
    sha256_digest(&ctx, sizeof digest, digest);
    for (size_t i = 0; i < sizeof digest; i++)
        snprintf(&prov->sha256[2 * i], 3, "%02x", digest[i]);
    prov->input_path = path;
    prov->input_text = text;
    prov->input_len = len;
    prov->has_seed = false;
    prov->seed = 0;
    time_t now = time(NULL);
    struct tm tm;
    gmtime_r(&now, &tm);
    strftime(prov->generated, sizeof prov->generated, "%Y-%m-%dT%H:%M:%SZ", &tm);
}
