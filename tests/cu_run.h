/* cu_run.h — the one main() of the CUnit suites: register a suite's tests, run them
 * verbosely, and exit 0 when all passed, 1 when any failed, 2 when CUnit could not
 * be set up (a test or suite that cannot be registered is a failure, not a skip). */
#ifndef LS_CU_RUN_H
#define LS_CU_RUN_H

#include <CUnit/Basic.h>
#include <stdbool.h>
#include <stddef.h>

typedef struct ls_cu_case {
    const char *name;
    CU_TestFunc fn;
} ls_cu_case;

static inline int ls_cu_run(const char *suite, CU_InitializeFunc init, CU_CleanupFunc clean, const ls_cu_case *cases,
                            size_t n)
{
    if (CU_initialize_registry() != CUE_SUCCESS)
        return 2;
    CU_pSuite s = CU_add_suite(suite, init, clean);
    bool ok = s != NULL;
    for (size_t i = 0; ok && i < n; i++)
        ok = CU_add_test(s, cases[i].name, cases[i].fn) != NULL;
    if (!ok) {
        CU_cleanup_registry();
        return 2;
    }
    CU_basic_set_mode(CU_BRM_VERBOSE);
    CU_basic_run_tests();
    unsigned fails =
        CU_get_number_of_failures() + CU_get_number_of_tests_failed() + CU_get_number_of_suites_failed();
    CU_cleanup_registry();
    return fails ? 1 : 0;
}

#define LS_CU_COUNT(a) (sizeof(a) / sizeof *(a))

#endif
