/* outcome.h — what an analysis answers: done, or why not.  Every analysis
 * that can fail for more than one reason (the operating point and its
 * re-solves, variants, formula, tolerance, fit, the sweeper) returns an
 * ls_outcome; the reasons themselves are in the diagnostics (or in the
 * study's record).  An outcome is no process exit code and no status of the
 * public API: the program maps it to cli.md's exit codes in one place
 * (ls_exit_code, cli/commands.c) and the library to ls_status in api.c
 * (status_of). */
#ifndef LS_OUTCOME_H
#define LS_OUTCOME_H

typedef enum ls_outcome {
    LS_DONE = 0,           /* the analysis ran; its results are in its record */
    LS_BAD_REQUEST,        /* the question cannot be answered as asked (a formula's --symbols or size
                              limits, fit with no free part ...); reported */
    LS_UNSOLVABLE,         /* the circuit has no solution (singular, no convergence, the self-check
                              failed, a formula that does not agree with the solver); reported */
    LS_NO_MEMORY,          /* memory ran out: no property of the circuit; reported where the
                              analysis says so */
    LS_NO_WORKER,          /* a worker (thread or process) could not be set up */
    LS_REELABORATE,        /* the sweeper: this point's values need the circuit elaborated again */
} ls_outcome;

#endif
