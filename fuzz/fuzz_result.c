/* libFuzzer target: the saved-result reader (io/result_read.h) on arbitrary bytes.
 * SPDX-License-Identifier: MIT
 */
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "io/result_read.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    ml_result *r = NULL;
    char err[256];
    ml_status st = ml_result_parse((const char *)data, size, &r, err, sizeof err);
    if (st == ML_OK) {
        /* every listed item is well formed: a name, a finite number when it is one */
        for (size_t i = 0; i < ml_result_count(r); i++) {
            const ml_result_item *it = ml_result_item_at(r, i);
            if (it == NULL || it->name[0] == '\0' || ml_result_find(r, it->name) == NULL
                || (it->type == ML_RESULT_NUMBER && !(it->value - it->value == 0)))
                abort();
        }
        ml_result_destroy(r);
    } else if (r != NULL || err[0] == '\0' || memchr(err, '\n', strlen(err)) != NULL) {
        abort(); /* a failure leaves no result and gives one line of reason */
    }
    return 0;
}
