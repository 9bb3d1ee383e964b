/* version.c — the version of the linked library. */
#include "rainprint/version.h"

const char *rp_version(void) { return RP_VERSION_STRING; }
