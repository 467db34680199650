/* dpz_sha256.h: SHA-256 message digest (NIST FIPS 180-4, Secure Hash Standard, 2015,
 * sections 4.1.2, 4.2.2, 5.1.1, 6.2), used by the CLI to fingerprint the inputs of a
 * sweep (geometry file, material tables, voxel labels) so that --resume and merge can
 * tell whether two runs were made from the same inputs.
 *
 * Nothing here prints or exits. Not thread-safe per context; distinct contexts are
 * independent. */
#ifndef DPZ_CLI_SHA256_H
#define DPZ_CLI_SHA256_H

#include <stddef.h>
#include <stdint.h>

#include "dpz_common.h"

#ifdef __cplusplus
extern "C" {
#endif

typedef struct dpz_sha256 {
    uint32_t h[8];    /* running hash value H(i), FIPS 180-4 6.2.2 */
    uint64_t n_bytes; /* message length so far, bytes */
    unsigned char block[64];
    size_t fill; /* bytes waiting in `block` */
} dpz_sha256;

void dpz_sha256_init(dpz_sha256 *ctx);
void dpz_sha256_update(dpz_sha256 *ctx, const void *data, size_t len);
/* Finishes the digest (padding of FIPS 180-4 5.1.1) into 32 bytes; the context must be
 * initialised again before reuse. */
void dpz_sha256_final(dpz_sha256 *ctx, unsigned char digest[32]);

/* Lower-case hexadecimal form of a digest: 64 characters and a NUL. */
void dpz_sha256_hex(const unsigned char digest[32], char hex[65]);

/* Digest of a whole buffer, as hexadecimal. */
void dpz_sha256_buffer_hex(const void *data, size_t len, char hex[65]);

/* Digest of a file's bytes, as hexadecimal. DPZ_EIO naming the path when the file cannot
 * be opened or read. */
dpz_status dpz_sha256_file_hex(const char *path, char hex[65], dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
