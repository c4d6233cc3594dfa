# tg_cflags.m4 - compiler checks for twingyre's configure.ac.
#
# Part of twingyre. GPL-3.0-or-later.

# TG_CHECK_C11_FLAG(FLAG, [ACTION-IF-OK], [ACTION-IF-NOT])
# ------------------------------------------------------
# Checks that $CC, given FLAG, compiles a program that uses C11 features
# (_Static_assert, _Alignas, _Generic).
AC_DEFUN([TG_CHECK_C11_FLAG], [
  AS_VAR_PUSHDEF([tg_cv_var], [tg_cv_c11_flag_$1])
  AC_CACHE_CHECK([whether $CC compiles C11 code with $1], [tg_cv_var], [
    tg_save_CFLAGS=$CFLAGS
    CFLAGS="$CFLAGS $1"
    AC_LANG_PUSH([C])
    AC_COMPILE_IFELSE([AC_LANG_SOURCE([[
#include <stdalign.h>
_Static_assert(sizeof(double) == 8, "double is 64 bits");
static _Alignas(16) double tg_a[2];
int main(void) { return _Generic(tg_a[0], double: 0, default: 1); }
]])], [AS_VAR_SET([tg_cv_var], [yes])], [AS_VAR_SET([tg_cv_var], [no])])
    AC_LANG_POP([C])
    CFLAGS=$tg_save_CFLAGS
  ])
  AS_VAR_IF([tg_cv_var], [yes], [$2], [$3])
  AS_VAR_POPDEF([tg_cv_var])
])

# TG_CHECK_POSIX_DECLS(CPPFLAGS-TO-TRY, [ACTION-IF-OK], [ACTION-IF-NOT])
# --------------------------------------------------------------------
# Checks that the POSIX.1-2008 functions the command uses (fork, sigaction,
# clock_gettime, waitpid) are declared under strict C11 plus CPPFLAGS-TO-TRY.
AC_DEFUN([TG_CHECK_POSIX_DECLS], [
  AC_CACHE_CHECK([whether POSIX.1-2008 functions are declared with $1],
                 [tg_cv_posix_decls], [
    tg_save_CFLAGS=$CFLAGS
    tg_save_CPPFLAGS=$CPPFLAGS
    CFLAGS="$CFLAGS $TG_STD_CFLAGS -Werror=implicit-function-declaration"
    CPPFLAGS="$CPPFLAGS $1"
    AC_LANG_PUSH([C])
    AC_COMPILE_IFELSE([AC_LANG_PROGRAM([[
#include <signal.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>
]], [[
struct sigaction sa;
struct timespec ts;
int status = 0;
sigemptyset(&sa.sa_mask);
(void)sigaction(SIGINT, &sa, NULL);
(void)clock_gettime(CLOCK_MONOTONIC, &ts);
pid_t p = fork();
(void)waitpid(p, &status, 0);
]])], [tg_cv_posix_decls=yes], [tg_cv_posix_decls=no])
    AC_LANG_POP([C])
    CFLAGS=$tg_save_CFLAGS
    CPPFLAGS=$tg_save_CPPFLAGS
  ])
  AS_IF([test "x$tg_cv_posix_decls" = xyes], [$2], [$3])
])
