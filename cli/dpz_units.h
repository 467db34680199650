/* dpz_units.h: parsers for the values users type on the dipolize command line.
 *
 * Every parser is a pure function of its text (apart from dpz_units_wavelengths with
 * `@FILE`, which reads the file): it returns DPZ_OK and the value in SI units, or
 * DPZ_EINVAL / DPZ_ERANGE / DPZ_ELIMIT / DPZ_EIO with one sentence in `err` (may be NULL)
 * that names the option (`opt`, e.g. "--radius") and says what was wrong and what form
 * is expected. Nothing here prints or exits.
 *
 * Grammar shared by all parsers:
 *   number   = [+-] digits [. digits] [(e|E) [+-] digits]   (also ".5", "5."); decimal
 *              only: no hex, no "nan", no "inf"; the value must be finite.
 *   length   = number unit, unit one of  m  cm  mm  um  µm  nm  pm  A (angstrom),
 *              no space between; a bare number is refused ("a length needs a unit").
 *   angle    = number (deg | rad)
 *   energy   = number eV
 *   complex  = number | number i | number (+|-) number i       e.g. 2.25, -10+1i,
 *              12.25-0.02i, 1i, -1.5e-3-2e1i ("i" alone is also read as 1i, "-i" as -1i)
 * Surrounding blanks are ignored; blanks inside a value are not accepted. */
#ifndef DPZ_CLI_UNITS_H
#define DPZ_CLI_UNITS_H

#include <complex.h>
#include <stddef.h>

#include "dpz_common.h"
#include "dpz_material.h"

#ifdef __cplusplus
extern "C" {
#endif

/* Largest number of points a wavelength list or size-parameter list may hold unless the
 * caller asks for fewer. */
#define DPZ_UNITS_MAX_POINTS 100000

/* A plain finite real number (no unit), e.g. "--tol 1e-8". */
dpz_status dpz_units_real(const char *opt, const char *text, double *out, dpz_err *err);

/* A non-negative decimal integer that fits in size_t (no sign, no exponent). */
dpz_status dpz_units_count(const char *opt, const char *text, size_t *out, dpz_err *err);

/* Metres per unit for a unit name ("nm" -> 1e-9); used for --stl-unit. DPZ_EINVAL with
 * the list of accepted units otherwise. */
dpz_status dpz_units_length_unit(const char *opt, const char *text, double *metres,
                                 dpz_err *err);

/* A length with its unit, in metres; any finite sign. */
dpz_status dpz_units_length(const char *opt, const char *text, double *out_m,
                            dpz_err *err);
/* A length that must be strictly positive, in metres. */
dpz_status dpz_units_length_pos(const char *opt, const char *text, double *out_m,
                                dpz_err *err);

/* An angle with unit deg or rad, in radians. */
dpz_status dpz_units_angle(const char *opt, const char *text, double *out_rad,
                           dpz_err *err);

/* An energy with unit eV, in eV. */
dpz_status dpz_units_energy_ev(const char *opt, const char *text, double *out_ev,
                               dpz_err *err);

/* A complex number (grammar above); both parts finite. */
dpz_status dpz_units_complex(const char *opt, const char *text, double complex *out,
                             dpz_err *err);

/* A comma-separated list of exactly `n` lengths ("1nm,2nm,3nm"), metres, any sign. */
dpz_status dpz_units_length_vec(const char *opt, const char *text, double *out_m,
                                size_t n, dpz_err *err);
/* A comma-separated list of exactly `n` angles, radians. */
dpz_status dpz_units_angle_vec(const char *opt, const char *text, double *out_rad,
                               size_t n, dpz_err *err);

/* A comma-separated list of 1..max positive lengths, metres; *n receives the count. */
dpz_status dpz_units_length_list(const char *opt, const char *text, double *out_m,
                                 size_t max, size_t *n, dpz_err *err);

/* A comma-separated list of 1..max positive plain numbers (size parameters x = k a_eq,
 * dimensionless); *n receives the count. Duplicates are refused. */
dpz_status dpz_units_size_params(const char *opt, const char *text, double *out,
                                 size_t max, size_t *n, dpz_err *err);

/* A list of vacuum wavelengths, metres, in one of three forms:
 *   LO:HI:STEP   lengths with units, 0 < LO <= HI, STEP > 0; points LO + i STEP for
 *                i = 0, 1, ... while <= HI, each rounded to 15 significant digits so
 *                that it is the double nearest its decimal value (1.3e-06, not
 *                1.2999999999999998e-06); HI itself is included when it falls on the
 *                grid within 1e-9 of STEP.
 *   L1,L2,...    an explicit comma list of positive lengths.
 *   @FILE        one length with unit per line; blank lines and '#' comments skipped.
 * At most `max_points` (0: DPZ_UNITS_MAX_POINTS) values; duplicates are refused. On
 * success *out is a malloc'd array of *n values (free with free()). */
dpz_status dpz_units_wavelengths(const char *opt, const char *text, size_t max_points,
                                 double **out, size_t *n, dpz_err *err);
/* The `@FILE` form applied to text already in memory (`name` is used in messages). */
dpz_status dpz_units_wavelength_text(const char *opt, const char *name, const char *buf,
                                     size_t len, size_t max_points, double **out,
                                     size_t *n, dpz_err *err);

/* A shard "I/N": 0 <= I < N, N >= 1. */
dpz_status dpz_units_shard(const char *opt, const char *text, size_t *index,
                           size_t *count, dpz_err *err);

/* A Drude-Lorentz specification (the part after "drude:"), comma-separated key=value:
 *   eps_inf=NUMBER        background permittivity (default 1)
 *   wp=ENERGY             plasma energy hbar omega_p, eV (required, >= 0)
 *   gamma=ENERGY          Drude damping hbar/tau, eV (default 0eV, >= 0)
 *   lorentz=F:E0:G        one Lorentz term: strength F (plain number), resonance E0 and
 *                         width G (energies, eV); repeat the key for more terms (<= 16).
 * Example: "eps_inf=9.5,wp=8.9eV,gamma=0.07eV,lorentz=1.2:2.9eV:0.6eV".
 * The meaning of the parameters is the model of dpz_material.h (Rakic et al. 1998, eq. 3
 * written for exp(-i omega t)). */
dpz_status dpz_units_drude(const char *opt, const char *text, dpz_drude_params *out,
                           dpz_err *err);

/* What a `--material LABEL=SPEC` argument says. */
typedef enum {
    DPZ_MATSPEC_CONST = 0, /* a complex permittivity */
    DPZ_MATSPEC_TABLE = 1, /* nk:FILE.csv */
    DPZ_MATSPEC_DRUDE = 2  /* drude:... */
} dpz_matspec_kind;

typedef struct dpz_matspec {
    unsigned label; /* 1..255 */
    dpz_matspec_kind kind;
    double complex eps;     /* DPZ_MATSPEC_CONST: permittivity relative to vacuum */
    char path[1024];        /* DPZ_MATSPEC_TABLE: the CSV path */
    dpz_drude_params drude; /* DPZ_MATSPEC_DRUDE */
} dpz_matspec;

/* Parses "LABEL=SPEC" (LABEL an integer 1..255; SPEC a complex constant, "nk:PATH" or
 * "drude:..."). With `has_label` = 0, `text` is SPEC alone and label is left at 0 (used
 * for --eps, which applies to every label). */
dpz_status dpz_units_material(const char *opt, const char *text, int has_label,
                              dpz_matspec *out, dpz_err *err);

#ifdef __cplusplus
}
#endif
#endif
