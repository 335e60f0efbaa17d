"""kinetics.engine.threads: one BLAS thread inside, the caller's setting restored after."""

from threadpoolctl import threadpool_info

from kinetics.engine.threads import one_blas_thread


def _blas_threads():
    return [lib["num_threads"] for lib in threadpool_info() if lib["user_api"] == "blas"]


def test_one_thread_inside_and_restored_after():
    before = _blas_threads()
    with one_blas_thread():
        assert all(n == 1 for n in _blas_threads())
    assert _blas_threads() == before


def test_limits_nest_and_repeat():
    before = _blas_threads()
    for _ in range(3):
        with one_blas_thread(), one_blas_thread():
            assert all(n == 1 for n in _blas_threads())
    assert _blas_threads() == before


def test_overlapping_calls_in_threads_restore_the_caller_setting():
    """Two threads inside at once: the setting from before comes back when both have left
    (not the limit of whichever left last).  Whether OpenBLAS honours a limit set from a
    worker thread is the library's affair (see kinetics.engine.threads)."""
    import threading

    before = _blas_threads()
    inside = threading.Barrier(2)

    def engine_call():
        with one_blas_thread():
            inside.wait()
            inside.wait()

    workers = [threading.Thread(target=engine_call) for _ in range(2)]
    for w in workers:
        w.start()
    for w in workers:
        w.join()
    assert _blas_threads() == before
    with one_blas_thread():
        assert all(n == 1 for n in _blas_threads())
    assert _blas_threads() == before
