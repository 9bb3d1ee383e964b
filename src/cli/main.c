/* main.c — placeholder until the commands land. */
#include <stdio.h>
int main(void) { puts("rainprint " RP_VERSION_STRING); return 0; }
