! Smoke test of the Fortran binding (bindings-c/fortran/ellipsa.f90), compiled
! as Fortran 2003 and run by tests/bindings/fortran.cmake:
!   test_fortran_smoke SCRATCH_DIR [PYTHON_FIXTURE_DIR]
! Fits, scores (plain arrays and strided sections), round-trips the model file
! through text and through a file, loads a model written by the Python binding
! (when the fixture directory is given), checks the distribution functions
! against closed forms, and provokes errors: every failure must come back as a
! status with the library's message, never a crash.
program test_fortran_smoke
  use, intrinsic :: iso_c_binding, only: c_double, c_int32_t, c_int64_t
  use, intrinsic :: ieee_arithmetic, only: ieee_value, ieee_positive_inf
  use ellipsa
  implicit none

  integer, parameter :: dp = c_double
  integer :: failures = 0, checks = 0
  character(len=1024) :: scratch_dir, fixture_dir
  integer :: nargs

  nargs = command_argument_count()
  if (nargs < 1) then
     write(*, '(a)') "usage: test_fortran_smoke SCRATCH_DIR [PYTHON_FIXTURE_DIR]"
     stop 2
  end if
  call get_command_argument(1, scratch_dir)
  fixture_dir = ""
  if (nargs >= 2) call get_command_argument(2, fixture_dir)

  write(*, '(a,a)') "ellipsa library ", ellipsa_library_version()
  call classical_fit_and_score()
  call strided_views()
  call robust_fit_flags_outliers()
  call model_files()
  call python_model()
  call distributions()
  call errors()
  call names()

  write(*, '(i0,a,i0,a)') checks - failures, " of ", checks, " checks passed"
  if (failures /= 0) stop 1

contains

  ! Names of methods, covariance structures and missing-value policies, from the
  ! library. Expected names and codes: the ELLIPSA_METHOD_, ELLIPSA_STRUCTURE_ and
  ! ELLIPSA_MISSING_ macros and their documented names in capi/include/ellipsa.h.
  subroutine names()
    character(len=11), parameter :: methods(7) = [character(len=11) :: "classical", "ledoit-wolf", &
         "oas", "mcd", "detmcd", "mrcd", "mixture"]
    character(len=9), parameter :: structures(5) = [character(len=9) :: "full", "diagonal", "tied", &
         "spherical", "all"]
    character(len=6), parameter :: policies(3) = [character(len=6) :: "drop", "refuse", "em"]
    character(len=:), allocatable :: message
    integer :: i, code, status
    do i = 1, 7
       call ellipsa_method_from_name(methods(i), code, status, message)
       call check(ellipsa_method_name(i) == trim(methods(i)) .and. status == ELLIPSA_OK .and. code == i &
            .and. len(message) == 0, "method " // trim(methods(i)) // " named and parsed")
    end do
    call check(ellipsa_method_name(ELLIPSA_METHOD_MIXTURE) == "mixture", "ELLIPSA_METHOD_MIXTURE is mixture")
    do i = 1, 5
       call ellipsa_structure_from_name(structures(i), code, status)
       call check(ellipsa_structure_name(i) == trim(structures(i)) .and. status == ELLIPSA_OK .and. code == i, &
            "structure " // trim(structures(i)) // " named and parsed")
    end do
    call check(ellipsa_structure_name(ELLIPSA_STRUCTURE_TIED) == "tied", "ELLIPSA_STRUCTURE_TIED is tied")
    do i = 1, 3
       call ellipsa_missing_from_name(policies(i), code, status)
       call check(ellipsa_missing_name(i) == trim(policies(i)) .and. status == ELLIPSA_OK .and. code == i, &
            "missing-value policy " // trim(policies(i)) // " named and parsed")
    end do
    call check(ellipsa_missing_name(ELLIPSA_MISSING_EM) == "em", "ELLIPSA_MISSING_EM is em")
    call check(ellipsa_structure_name(99) == "unknown" .and. ellipsa_missing_name(0) == "unknown" &
         .and. ellipsa_method_name(-1) == "unknown", "codes the library does not know are named unknown")
    call ellipsa_structure_from_name("banded", code, status, message)
    call check(status == ELLIPSA_ERR_ARGUMENT .and. code == 0 .and. index(message, "spherical") > 0, &
         "unknown structure name: ELLIPSA_ERR_ARGUMENT, message lists the names")
    call ellipsa_missing_from_name("impute", code, status, message)
    call check(status == ELLIPSA_ERR_ARGUMENT .and. len(message) > 0, "unknown missing-value policy")
    call ellipsa_method_from_name("mcd" // achar(0) // "x", code, status, message)
    call check(status == ELLIPSA_ERR_ARGUMENT .and. index(message, "NUL") > 0, "a name holding a NUL is refused")
  end subroutine names

  subroutine check(ok, what)
    logical, intent(in) :: ok
    character(len=*), intent(in) :: what
    checks = checks + 1
    if (ok) then
       write(*, '(a,a)') "ok   ", what
    else
       failures = failures + 1
       write(*, '(a,a)') "FAIL ", what
    end if
  end subroutine check

  logical function close_to(a, b, rel)
    real(dp), intent(in) :: a, b, rel
    close_to = abs(a - b) <= rel * max(abs(a), abs(b), 1e-300_dp)
  end function close_to

  !> Invented rows of three correlated variables (no source: made up here).
  subroutine invented_rows(x)
    real(dp), intent(out) :: x(:, :)
    integer :: i
    real(dp) :: u1, u2, u3
    do i = 1, size(x, 1)
       u1 = sin(0.37_dp * i)
       u2 = cos(1.13_dp * i + 0.5_dp)
       u3 = sin(0.029_dp * real(i, dp)**2)
       x(i, 1) = 10.0_dp + u1
       x(i, 2) = 5.0_dp + 0.5_dp * u1 + u2
       x(i, 3) = -3.0_dp + 0.2_dp * u2 + u3
    end do
  end subroutine invented_rows

  !> Squared Mahalanobis distances from the definition, in plain Fortran:
  !> two-pass mean, covariance with divisor n-1, Cholesky factor, forward solve.
  subroutine reference_distances(x, mean, cov, d2)
    real(dp), intent(in) :: x(:, :)
    real(dp), intent(out) :: mean(:), cov(:, :), d2(:)
    real(dp) :: l(size(x, 2), size(x, 2)), z(size(x, 2))
    integer :: n, p, i, j, k
    n = size(x, 1)
    p = size(x, 2)
    do j = 1, p
       mean(j) = sum(x(:, j)) / n
    end do
    do j = 1, p
       do k = 1, p
          cov(j, k) = sum((x(:, j) - mean(j)) * (x(:, k) - mean(k))) / (n - 1)
       end do
    end do
    l = 0
    do j = 1, p
       l(j, j) = sqrt(cov(j, j) - sum(l(j, 1:j - 1)**2))
       do i = j + 1, p
          l(i, j) = (cov(i, j) - sum(l(i, 1:j - 1) * l(j, 1:j - 1))) / l(j, j)
       end do
    end do
    do i = 1, n
       do j = 1, p
          z(j) = (x(i, j) - mean(j) - sum(l(j, 1:j - 1) * z(1:j - 1))) / l(j, j)
       end do
       d2(i) = sum(z**2)
    end do
  end subroutine reference_distances

  subroutine classical_fit_and_score()
    real(dp) :: x(60, 3), mean(3), cov(3, 3), d2_ref(60)
    real(dp) :: d2(60), pv(60), contrib(60, 3), loc(3), sc(3, 3), tail, w
    integer(c_int32_t) :: flag(60), obs(60)
    integer(c_int64_t) :: p, used, dropped
    type(ellipsa_model) :: m
    integer :: status, kind, i
    character(len=:), allocatable :: method, message, name
    logical :: ok

    call invented_rows(x)
    call reference_distances(x, mean, cov, d2_ref)
    call ellipsa_fit(m, x, status, method="classical", &
         column_names=[character(len=8) :: "melt", "water", "mass"], message=message)
    call check(status == ELLIPSA_OK .and. ellipsa_is_set(m), "classical fit of a 60 x 3 Fortran array")
    call check(len(message) == 0, "no message after a successful call")
    call ellipsa_describe(m, status, kind=kind, method=method, dimension=p)
    call check(status == ELLIPSA_OK .and. kind == ELLIPSA_KIND_GAUSSIAN .and. method == "classical" &
         .and. p == 3, "describe: Gaussian, classical, 3 columns")
    call ellipsa_rows(m, used, dropped, status)
    call check(status == ELLIPSA_OK .and. used == 60 .and. dropped == 0, "rows: 60 used, 0 dropped")
    call ellipsa_column_name(m, 2, name, status)
    call check(status == ELLIPSA_OK .and. name == "water", "column 2 is named 'water' (trailing blanks dropped)")
    call ellipsa_component(m, status, location=loc, scatter=sc, weight=w)
    ! Definition of the sample mean and covariance (divisor n-1), computed above.
    call check(status == ELLIPSA_OK .and. all(abs(loc - mean) <= 1e-12_dp * abs(mean)), &
         "location = column means computed in Fortran (two-pass)")
    call check(all(abs(sc - cov) <= 1e-11_dp * maxval(abs(cov))) .and. w == 1.0_dp, &
         "scatter = covariance (n-1) computed in Fortran; weight 1")

    call ellipsa_score(m, x, status, squared_distance=d2, p_value=pv, flag=flag, observed=obs, &
         contribution=contrib, level=0.975_dp, reference=ELLIPSA_REFERENCE_CHI2)
    call check(status == ELLIPSA_OK, "score 60 rows")
    ok = .true.
    do i = 1, 60
       ok = ok .and. close_to(d2(i), d2_ref(i), 1e-10_dp)
    end do
    call check(ok, "squared distances = Cholesky solve computed in Fortran")
    ok = .true.
    do i = 1, 60
       ok = ok .and. close_to(sum(contrib(i, :)), d2(i), 1e-10_dp)
    end do
    ! ellipsa.h, ellipsa_scores.contribution: the terms sum to the distance.
    call check(ok, "each row's contributions sum to its squared distance")
    ok = all(obs == 3)
    do i = 1, 60
       call ellipsa_chi2_tail(tail, d2(i), 3.0_dp, status)
       ok = ok .and. status == ELLIPSA_OK .and. close_to(pv(i), tail, 1e-12_dp)
       ok = ok .and. (flag(i) == 1 .eqv. pv(i) < 0.025_dp)
    end do
    ! ellipsa.h, ELLIPSA_REFERENCE_CHI2: p = P(chi2(q) > d2), flag when p < 1 - level.
    call check(ok, "chi-square reference: p-value = chi2 tail (3 df), flag = p < 0.025, 3 observed")
    call ellipsa_free(m)
    call check(.not. ellipsa_is_set(m), "ellipsa_free clears the model")
    call ellipsa_free(m)  ! twice: a no-op (a crash here fails the test)
  end subroutine classical_fit_and_score

  subroutine strided_views()
    real(dp), target :: big(120, 5), x(60, 3)
    real(dp) :: d2_all(60), d2_sec(30), d2_rev(60), d2_odd(60)
    type(ellipsa_model) :: m, m2
    real(dp) :: loc(3), loc2(3)
    integer :: status, i

    call invented_rows(x)
    big = -777.0_dp
    do i = 1, 60
       big(2 * i - 1, 2) = x(i, 1)
       big(2 * i - 1, 3) = x(i, 2)
       big(2 * i - 1, 5) = x(i, 3)
    end do
    call ellipsa_fit(m, x, status)
    call ellipsa_fit(m2, big(1:119:2, [2, 3, 5]), status)  ! vector subscript: the compiler makes a copy
    call ellipsa_component(m, status, location=loc)
    call ellipsa_component(m2, status, location=loc2)
    call check(status == ELLIPSA_OK .and. all(loc == loc2), "fit of a section with a vector subscript")
    call ellipsa_fit(m2, big(1:119:2, 2:3), status)
    call check(status == ELLIPSA_OK, "fit of a strided section (row stride 2, read in place)")
    call ellipsa_free(m2)

    call ellipsa_score(m, x, status, squared_distance=d2_all)
    call ellipsa_score(m, x(1:60:2, :), status, squared_distance=d2_sec)
    call check(status == ELLIPSA_OK .and. all(d2_sec == d2_all(1:60:2)), &
         "scoring x(1:60:2, :) in place = every other row of the full scoring")
    call ellipsa_score(m, x(60:1:-1, :), status, squared_distance=d2_rev)
    call check(status == ELLIPSA_OK .and. all(d2_rev == d2_all(60:1:-1)), &
         "scoring x(60:1:-1, :) (negative stride, copied first) gives the rows reversed")
    d2_odd = -1
    call ellipsa_score(m, x(1:60:2, :), status, squared_distance=d2_odd(1:60:2))
    call check(status == ELLIPSA_OK .and. all(d2_odd(1:60:2) == d2_sec) .and. all(d2_odd(2:60:2) == -1), &
         "a strided output array is filled at its own elements only")
    call ellipsa_free(m)
  end subroutine strided_views

  subroutine robust_fit_flags_outliers()
    real(dp) :: x(80, 3), d2(80), h
    integer(c_int32_t) :: flag(80)
    type(ellipsa_model) :: m
    integer :: status, i
    integer, parameter :: planted(3) = [5, 17, 42]
    character(len=:), allocatable :: method
    call invented_rows(x)
    do i = 1, 3
       x(planted(i), 1) = x(planted(i), 1) + 6.0_dp
       x(planted(i), 3) = x(planted(i), 3) - 4.0_dp
    end do
    call ellipsa_fit(m, x, status, method="mcd", seed=7_c_int64_t, alpha=0.75_dp)
    call ellipsa_describe(m, status, method=method)
    call check(status == ELLIPSA_OK .and. method == "mcd", "MCD fit with seed and alpha")
    call ellipsa_diagnostic(m, "h", h, status)
    ! ellipsa.h, ellipsa_fit_options_set_alpha: h = floor(2*floor((n+p+1)/2) - n + 2*(n - floor((n+p+1)/2))*alpha)
    call check(status == ELLIPSA_OK .and. h == real(int(2 * 42 - 80 + 2 * (80 - 42) * 0.75_dp), dp), &
         "diagnostic h = 61 for n = 80, p = 3, alpha = 0.75")
    call ellipsa_score(m, x, status, squared_distance=d2, flag=flag)
    ! Rows shifted by several standard deviations are what a robust fit exists to flag (common practice).
    call check(status == ELLIPSA_OK .and. all(flag(planted) == 1), "the three planted rows are flagged")
    call check(count(flag == 1) <= 3 + 8, "few other rows flagged (at most 8 of 77 at level 0.975)")
    call ellipsa_free(m)
  end subroutine robust_fit_flags_outliers

  subroutine model_files()
    real(dp) :: x(60, 3), d2a(60), d2b(60)
    type(ellipsa_model) :: m, back, fromfile
    character(len=:), allocatable :: text, again, fromdisk, path
    integer :: status
    call invented_rows(x)
    path = trim(scratch_dir) // "/fortran_model.json"
    call ellipsa_fit(m, x, status, method="ledoit-wolf")
    call ellipsa_to_text(m, text, status)
    call check(status == ELLIPSA_OK .and. index(text, '"format_version"') > 0, "model as text (JSON)")
    call ellipsa_from_text(back, text, status)
    call ellipsa_to_text(back, again, status)
    call check(status == ELLIPSA_OK .and. again == text .and. len(again) == len(text), &
         "text -> model -> text gives the same bytes")
    call ellipsa_write_model(m, path, status)
    call check(status == ELLIPSA_OK, "model written to " // path)
    call ellipsa_read_model(fromfile, path, status)
    call ellipsa_to_text(fromfile, fromdisk, status)
    call check(status == ELLIPSA_OK .and. fromdisk == text, "file -> model gives the same text")
    call ellipsa_score(m, x, status, squared_distance=d2a)
    call ellipsa_score(fromfile, x, status, squared_distance=d2b)
    call check(status == ELLIPSA_OK .and. all(d2a == d2b), "the model read back scores bit for bit the same")
    call ellipsa_free(m)
    call ellipsa_free(back)
    call ellipsa_free(fromfile)
  end subroutine model_files

  subroutine python_model()
    type(ellipsa_model) :: m
    character(len=:), allocatable :: path, method, message, name
    integer :: status, u, n, p, i, ios
    real(dp), allocatable :: rows(:, :), d2_py(:), d2(:), loc_py(:), loc(:)
    integer(c_int64_t) :: dim
    logical :: ok
    if (len_trim(fixture_dir) == 0) then
       write(*, '(a)') "skip model written by Python: no fixture directory given (needs /usr/bin/python3)"
       return
    end if
    path = trim(fixture_dir) // "/python_model.json"
    call ellipsa_read_model(m, path, status, message)
    call check(status == ELLIPSA_OK, "model written by the Python binding loads: " // path // " " // message)
    if (status /= ELLIPSA_OK) return
    call ellipsa_describe(m, status, method=method, dimension=dim)
    call ellipsa_column_name(m, 3, name, status)
    call check(method == "mcd" .and. dim == 3 .and. name == "mass", "Python's model: mcd, 3 columns, 'mass' last")
    u = 77
    open(unit=u, file=trim(fixture_dir) // "/python_scores.txt", status="old", action="read", iostat=ios)
    call check(ios == 0, "Python's scores file opens")
    if (ios /= 0) return
    read(u, *) p, n
    allocate(rows(n, p), d2_py(n), d2(n), loc_py(p), loc(p))
    do i = 1, n
       read(u, *) rows(i, :)
    end do
    do i = 1, n
       read(u, *) d2_py(i)
    end do
    read(u, *) loc_py
    close(u)
    call ellipsa_component(m, status, location=loc)
    call check(all(loc == loc_py), "location read in Fortran = the one Python reported (same doubles)")
    call ellipsa_score(m, rows, status, squared_distance=d2)
    ok = status == ELLIPSA_OK
    do i = 1, n
       ok = ok .and. close_to(d2(i), d2_py(i), 1e-13_dp)
    end do
    call check(ok, "Fortran's scores of Python's model = Python's scores (column-major against row-major views)")
    call ellipsa_free(m)
  end subroutine python_model

  subroutine distributions()
    real(dp) :: q, t
    integer :: status
    ! chi-square with 2 df is the exponential law with mean 2: P(X > x) = exp(-x/2) (closed form).
    call ellipsa_chi2_quantile(q, 0.975_dp, 2.0_dp, status)
    call check(status == ELLIPSA_OK .and. close_to(q, -2.0_dp * log(0.025_dp), 1e-13_dp), &
         "chi2 quantile(0.975, 2 df) = -2 ln 0.025 (closed form)")
    call ellipsa_chi2_tail(t, 3.0_dp, 2.0_dp, status)
    call check(status == ELLIPSA_OK .and. close_to(t, exp(-1.5_dp), 1e-13_dp), "chi2 tail(3, 2 df) = exp(-1.5)")
    ! F(2, 2): P(X > x) = 1 / (1 + x) (closed form of its distribution function x / (1 + x)).
    call ellipsa_f_tail(t, 3.0_dp, 2.0_dp, 2.0_dp, status)
    call check(status == ELLIPSA_OK .and. close_to(t, 0.25_dp, 1e-13_dp), "F(2, 2) tail at 3 = 1/4")
    call ellipsa_f_quantile(q, 0.75_dp, 2.0_dp, 2.0_dp, status)
    call check(status == ELLIPSA_OK .and. close_to(q, 3.0_dp, 1e-12_dp), "F(2, 2) quantile at 0.75 = 3")
    ! Beta(1, 1) is the uniform law on [0, 1].
    call ellipsa_beta_tail(t, 0.3_dp, 1.0_dp, 1.0_dp, status)
    call check(status == ELLIPSA_OK .and. close_to(t, 0.7_dp, 1e-14_dp), "Beta(1, 1) tail at 0.3 = 0.7")
    call ellipsa_beta_quantile(q, 0.4_dp, 1.0_dp, 1.0_dp, status)
    call check(status == ELLIPSA_OK .and. close_to(q, 0.4_dp, 1e-14_dp), "Beta(1, 1) quantile at 0.4 = 0.4")
    ! Tracy, Young & Mason (1992) phase II limit, as stated in ellipsa.h:
    ! p(m+1)(m-1)/(m(m-p)) FQ(1-alpha; p, m-p); with m = 22, p = 2: 2*23*21/(22*20) FQ(0.99; 2, 20).
    call ellipsa_f_quantile(q, 0.99_dp, 2.0_dp, 20.0_dp, status)
    call ellipsa_hotelling_limit(t, ELLIPSA_PHASE_TWO, 22_c_int64_t, 2_c_int64_t, 0.01_dp, status)
    call check(status == ELLIPSA_OK .and. close_to(t, 2.0_dp * 23 * 21 / (22.0_dp * 20) * q, 1e-12_dp), &
         "Hotelling phase II limit = the F form of Tracy, Young & Mason (1992)")
  end subroutine distributions

  subroutine errors()
    real(dp) :: x(60, 3), few(2, 3), q, d2(60), small(10), value
    real(dp), allocatable :: wide(:, :)
    type(ellipsa_model) :: m, none
    character(len=:), allocatable :: message, text
    integer :: status
    call invented_rows(x)

    call ellipsa_fit(m, x, status, method="robustest", message=message)
    call check(status == ELLIPSA_ERR_ARGUMENT .and. len(message) > 0 .and. .not. ellipsa_is_set(m), &
         "unknown method name: ELLIPSA_ERR_ARGUMENT, message: " // message)
    call check(ellipsa_status_name(status) == "ELLIPSA_ERR_ARGUMENT", "status name of 2 is ELLIPSA_ERR_ARGUMENT")

    few = 1
    few(2, :) = [2.0_dp, 3.0_dp, 5.0_dp]
    call ellipsa_fit(m, few, status, message=message)
    call check(status == ELLIPSA_ERR_DATA .and. len(message) > 0, "2 rows for 3 columns: ELLIPSA_ERR_DATA, message: " &
         // message)

    x(7, 2) = ieee_value(x(7, 2), ieee_positive_inf)
    call ellipsa_fit(m, x, status, message=message)
    ! The library's message names the cell as Fortran counts it: data row 7, column "x2" is x(7, 2).
    call check(status == ELLIPSA_ERR_DATA .and. index(message, 'data row 7, column "x2" is infinite') > 0, &
         "an infinite value: ELLIPSA_ERR_DATA naming its row, message: " // message)
    call invented_rows(x)

    call ellipsa_fit(m, x, status, method="mcd", alpha=0.2_dp, message=message)
    call check(status == ELLIPSA_ERR_ARGUMENT, "alpha 0.2: ELLIPSA_ERR_ARGUMENT, message: " // message)

    call ellipsa_fit(m, x, status, column_names=[character(len=4) :: "a", "b" // char(0), "c"], message=message)
    call check(status == ELLIPSA_ERR_ARGUMENT .and. index(message, "NUL") > 0, &
         "a column name holding NUL is refused: " // message)

    call ellipsa_fit(m, x, status)
    allocate(wide(10, 4))
    wide = 1
    call ellipsa_score(m, wide, status, squared_distance=small, message=message)
    call check(status == ELLIPSA_ERR_SHAPE .and. len(message) > 0, &
         "4 columns against a 3-column model: ELLIPSA_ERR_SHAPE, message: " // message)
    call ellipsa_score(m, x, status, squared_distance=small, message=message)
    call check(status == ELLIPSA_ERR_SHAPE, "an output of 10 for 60 rows: ELLIPSA_ERR_SHAPE, message: " // message)
    call ellipsa_score(m, x, status, squared_distance=d2, level=1.5_dp, message=message)
    call check(status == ELLIPSA_ERR_ARGUMENT, "level 1.5: ELLIPSA_ERR_ARGUMENT, message: " // message)
    call check(ellipsa_last_error() == message, "ellipsa_last_error() holds the same message")

    call ellipsa_score(none, x, status, squared_distance=d2, message=message)
    call check(status == ELLIPSA_ERR_NULL, "a model never fitted: ELLIPSA_ERR_NULL, message: " // message)
    call ellipsa_diagnostic(m, "no_such_diagnostic", value, status, message=message)
    call check(status == ELLIPSA_ERR_ARGUMENT, "unknown diagnostic: ELLIPSA_ERR_ARGUMENT, message: " // message)

    call ellipsa_from_text(none, '{"format_version": 1, "kind": "gaussian"', status, message)
    call check(status == ELLIPSA_ERR_FORMAT .and. .not. ellipsa_is_set(none), &
         "truncated JSON: ELLIPSA_ERR_FORMAT, message: " // message)
    call ellipsa_read_model(none, trim(scratch_dir) // "/no_such_model.json", status, message)
    call check(status == ELLIPSA_ERR_DATA .and. index(message, "no_such_model.json") > 0, &
         "missing model file: ELLIPSA_ERR_DATA naming the file, message: " // message)
    call ellipsa_write_model(m, trim(scratch_dir) // "/no_such_dir/model.json", status, message)
    call check(status == ELLIPSA_ERR_DATA .and. len(message) > 0, &
         "model file in a missing directory: ELLIPSA_ERR_DATA, message: " // message)
    call ellipsa_to_text(m, text, status)
    call check(status == ELLIPSA_OK, "the model is still usable after the failed calls")

    call ellipsa_chi2_quantile(q, 1.5_dp, 2.0_dp, status, message)
    call check(status == ELLIPSA_ERR_ARGUMENT, "chi2 quantile of probability 1.5: ELLIPSA_ERR_ARGUMENT, message: " &
         // message)
    call ellipsa_hotelling_limit(q, 3, 22_c_int64_t, 2_c_int64_t, 0.01_dp, status, message)
    call check(status == ELLIPSA_ERR_ARGUMENT, "phase 3: ELLIPSA_ERR_ARGUMENT, message: " // message)
    call ellipsa_free(m)
  end subroutine errors

end program test_fortran_smoke
