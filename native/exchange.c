/*
 * exchange(a, b): swap two paths on one file system in a single step with Linux's
 * renameat2(RENAME_EXCHANGE) (kernel 3.15+; called through syscall() so an older C library
 * without the wrapper still works). Returns 0, or the errno of the failure; never throws for
 * a file-system error, so the caller decides what to fall back to.
 */
#define _GNU_SOURCE
#include <node_api.h>
#include <errno.h>
#include <fcntl.h>
#include <string.h>
#include <unistd.h>
#include <sys/syscall.h>

#ifndef RENAME_EXCHANGE
#define RENAME_EXCHANGE (1 << 1)
#endif

#define PATH_BYTES 4096

static int path_arg(napi_env env, napi_value v, char *buf) {
  size_t len = 0;
  if (napi_get_value_string_utf8(env, v, buf, PATH_BYTES, &len) != napi_ok) return -1;
  return len >= PATH_BYTES - 1 ? -2 : 0;
}

static napi_value Exchange(napi_env env, napi_callback_info info) {
  size_t argc = 2;
  napi_value argv[2];
  char a[PATH_BYTES], b[PATH_BYTES];
  napi_value result;
  int err = 0;
  if (napi_get_cb_info(env, info, &argc, argv, NULL, NULL) != napi_ok || argc < 2) {
    napi_throw_type_error(env, NULL, "exchange(a, b) takes two paths");
    return NULL;
  }
  int ra = path_arg(env, argv[0], a), rb = path_arg(env, argv[1], b);
  if (ra == -1 || rb == -1) {
    napi_throw_type_error(env, NULL, "exchange(a, b) takes two paths as strings");
    return NULL;
  }
  if (ra == -2 || rb == -2) {
    err = ENAMETOOLONG;
  } else {
#ifdef SYS_renameat2
    if (syscall(SYS_renameat2, AT_FDCWD, a, AT_FDCWD, b, RENAME_EXCHANGE) != 0) err = errno;
#else
    err = ENOSYS;
#endif
  }
  napi_create_int32(env, err, &result);
  return result;
}

NAPI_MODULE_INIT() {
  napi_value fn;
  napi_create_function(env, "exchange", NAPI_AUTO_LENGTH, Exchange, NULL, &fn);
  napi_set_named_property(env, exports, "exchange", fn);
  return exports;
}
