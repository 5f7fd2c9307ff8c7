/* cpf_require (fuzz.h): the one way a fuzz target reports a broken property. */
#include <stdio.h>
#include <stdlib.h>

#include "fuzz.h"

void cpf_require(int cond, const char *what) {
    if (cond) return;
    fprintf(stderr, "fuzz property broken: %s\n", what);
    abort();
}
