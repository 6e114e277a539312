/*
 * test_install.c - `make install PREFIX=... DESTDIR=...` gives a tree that
 * pkg-config can use: a two-line program compiles and links against the
 * installed firmware library and runs; the CLI, headers and man page are
 * where they belong. Runs make from the repository root (where tests run).
 */
#include <libgen.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "tl_test.h"

static char build_dir[512];

static int sh(const char *cmd, char *out, size_t cap)
{
    return tl_test_shell(cmd, out, cap);
}

static void test_install_tree_usable(void **state)
{
    (void)state;
    char dest[] = "/tmp/tl_install_XXXXXX";
    assert_non_null(mkdtemp(dest));
    char cmd[16384], out[16384];
    /* a clean environment for the inner make (no jobserver of the outer one) */
    snprintf(cmd, sizeof cmd,
             "env -u MAKEFLAGS -u MFLAGS -u MAKELEVEL make -s BUILD=%s install PREFIX=/opt/tl DESTDIR=%s 2>&1",
             build_dir, dest);
    const int rc = sh(cmd, out, sizeof out);
    if (rc != 0)
        fail_msg("make install failed (%d): %s", rc, out);
    const char *files[] = { "bin/tidelock", "lib/libtidelock-firmware.a", "include/tidelock/tl_chain.h",
                            "include/tidelock/tl_fixed.h", "lib/pkgconfig/tidelock-firmware.pc",
                            "share/man/man1/tidelock.1" };
    for (size_t i = 0; i < sizeof files / sizeof files[0]; i++) {
        char path[4200];
        struct stat st;
        snprintf(path, sizeof path, "%s/opt/tl/%s", dest, files[i]);
        if (stat(path, &st) != 0)
            fail_msg("not installed: %s", path);
    }
    /* pkg-config with the staged tree as sysroot */
    char pc_env[1024];
    snprintf(pc_env, sizeof pc_env, "PKG_CONFIG_SYSROOT_DIR=%s PKG_CONFIG_PATH=%s/opt/tl/lib/pkgconfig", dest, dest);
    snprintf(cmd, sizeof cmd, "%s pkg-config --modversion tidelock-firmware", pc_env);
    assert_int_equal(sh(cmd, out, sizeof out), 0);
    printf("    pkg-config: tidelock-firmware %s", out);
    /* the two-line program */
    char src[512], exe[512];
    snprintf(src, sizeof src, "%s/two_lines.c", dest);
    snprintf(exe, sizeof exe, "%s/two_lines", dest);
    FILE *f = fopen(src, "w");
    assert_non_null(f);
    fputs("#include <tl_chain.h>\n"
          "int main(void) { tl_config c; tl_config_default(&c); return c.points == 8192u ? 0 : 1; }\n",
          f);
    fclose(f);
    snprintf(cmd, sizeof cmd, "cc -std=c11 -o %s %s $(%s pkg-config --cflags --libs tidelock-firmware) 2>&1", exe, src,
             pc_env);
    if (sh(cmd, out, sizeof out) != 0)
        fail_msg("compiling against the installed library failed: %s", out);
    snprintf(cmd, sizeof cmd, "%s", exe);
    assert_int_equal(sh(cmd, out, sizeof out), 0);
    /* the installed CLI runs */
    snprintf(cmd, sizeof cmd, "%s/opt/tl/bin/tidelock --version", dest);
    assert_int_equal(sh(cmd, out, sizeof out), 0);
    assert_non_null(strstr(out, "arithmetic spec"));
    snprintf(cmd, sizeof cmd, "rm -rf %s", dest);
    assert_int_equal(sh(cmd, out, sizeof out), 0);
}

int main(int argc, char **argv)
{
    (void)argc;
    /* this binary is BUILD/VARIANT/test_install: the build folder is two up */
    char self[4096];
    snprintf(self, sizeof self, "%s", argv[0]);
    char *variant_dir = dirname(self);
    snprintf(build_dir, sizeof build_dir, "%s", dirname(variant_dir));
    const struct CMUnitTest tests[] = {
        cmocka_unit_test(test_install_tree_usable),
    };
    return cmocka_run_group_tests_name("install", tests, NULL, NULL);
}
