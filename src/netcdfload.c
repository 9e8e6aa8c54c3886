/* sillwatch: the netCDF C library loaded at first use (netcdfload.h). */
#include "netcdfload.h"

#include <dlfcn.h>
#include <pthread.h>
#include <stdio.h>
#include <string.h>

/* The library's file name: its SONAME, which the Makefile reads from the
 * library it builds against. */
#ifndef SW_NETCDF_LIB
#define SW_NETCDF_LIB "libnetcdf.so"
#endif

/* Each entry's type as <netcdf.h> declares the function (the operand of
 * _Generic is not evaluated: no reference to the symbol is made). */
#define SAME_TYPE(name, ret, params)                                        \
    _Static_assert(_Generic(&name, ret(*) params: 1, default: 0),           \
                   #name " as <netcdf.h> declares it");
SW_NETCDF_FUNCTIONS(SAME_TYPE)

const sw_netcdf_api *sw_netcdf;

static sw_netcdf_api api;
static char why[256];
static pthread_once_t once = PTHREAD_ONCE_INIT;

/* dlsym's object pointer into a function pointer, copied rather than
 * cast (ISO C leaves that cast undefined; POSIX requires the two to
 * agree). */
static int take(void *lib, const char *name, void *fn, size_t size)
{
    void *sym = dlsym(lib, name);
    if (sym == NULL) {
        snprintf(why, sizeof why, "%s has no %s", SW_NETCDF_LIB, name);
        return -1;
    }
    memcpy(fn, &sym, size);
    return 0;
}

static void load(void)
{
    void *lib = dlopen(SW_NETCDF_LIB, RTLD_NOW | RTLD_LOCAL);
    if (lib == NULL) {
        const char *e = dlerror();
        snprintf(why, sizeof why, "%s", e != NULL ? e : SW_NETCDF_LIB);
        return;
    }
#define TAKE(name, ret, params)                                             \
    if (take(lib, #name, &api.name, sizeof api.name) != 0)                  \
        return;
    SW_NETCDF_FUNCTIONS(TAKE)
#undef TAKE
    sw_netcdf = &api; /* kept loaded: a process loads it at most once */
}

int sw_netcdf_load(const char *path, sw_error *err)
{
    pthread_once(&once, load);
    if (sw_netcdf != NULL)
        return SW_OK;
    return sw_error_set(err, SW_EDATA, path, 0, 0,
                        "NetCDF files need the netCDF C library, which "
                        "could not be loaded: %s",
                        why);
}
