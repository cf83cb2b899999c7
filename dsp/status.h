/* Status codes shared by every modlens module.
 * SPDX-License-Identifier: MIT
 */
#ifndef ML_DSP_STATUS_H
#define ML_DSP_STATUS_H

typedef enum {
    ML_OK = 0,    /* success                                              */
    ML_EINVAL,    /* an argument or configuration is out of range          */
    ML_ENOMEM,    /* an allocation failed                                  */
    ML_EFFT,      /* FFTW could not make a plan                            */
    ML_EIO,       /* a file or device could not be read or written         */
    ML_EFORMAT,   /* the input is not in a format we can read              */
    ML_EDEVICE,   /* an audio device refused or failed                     */
    ML_ENOSIGNAL, /* the input holds no usable signal (silent, too short)  */
    ML_ERANGE,    /* a value in the input is not finite (NaN, infinity)    */
    ML_STATUS_COUNT
} ml_status;

/* A short English description of s; never NULL (unknown codes get a generic text). */
const char *ml_strerror(ml_status s);

#endif
