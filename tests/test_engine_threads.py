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
