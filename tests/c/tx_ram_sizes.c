/*
 * Compile-time check (project-written): the RAM a generated header states for its two
 * transmitters equals sizeof on the compiler at hand. OOK_STREAM_BYTES: struct <prefix>_tx
 * plus <PREFIX>_MAX_FRAME_BYTES; OOK_TXBUF_BYTES (when the run buffer is in): struct
 * <prefix>_txbuf. The build fails (negative array size) when a figure is wrong.
 */
#include <stddef.h>

#define OOK_CAT_(a, b) a##b
#define OOK_CAT(a, b) OOK_CAT_(a, b)
#define OOK_FN(suffix) OOK_CAT(OOK_PREFIX, suffix)
#define OOK_CONST(suffix) OOK_CAT(OOK_UPREFIX, suffix)

#include OOK_HEADER

typedef char ook_stream_ram_ok[(sizeof(struct OOK_FN(_tx)) + OOK_CONST(_MAX_FRAME_BYTES)
                                == OOK_STREAM_BYTES) ? 1 : -1];
#ifdef OOK_TXBUF_BYTES
typedef char ook_txbuf_ram_ok[(sizeof(struct OOK_FN(_txbuf)) == OOK_TXBUF_BYTES) ? 1 : -1];
#endif
