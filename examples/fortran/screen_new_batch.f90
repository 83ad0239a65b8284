! The demo's reference-to-new-batch step from Fortran (invented data,
! examples/README.md): a robust MCD profile of mould A's clean shots, the new
! batch's mould A shots scored against it, the flagged shots listed with the
! variable that contributes most, and the profile saved as a model file that
! every binding and `ellipsa score` read.
!
!   screen_new_batch REFERENCE.csv NEW.csv MODEL_OUT.json
!
! Build (bindings-c/fortran/README.md):
!   gfortran -std=f2003 bindings-c/fortran/ellipsa_c.f90 bindings-c/fortran/ellipsa.f90 \
!     examples/fortran/screen_new_batch.f90 -Lbuild/lib -lellipsa -Wl,-rpath,$PWD/build/lib
! A flag is statistical evidence for a person to look at, not a verdict on a cap.
program screen_new_batch
  use, intrinsic :: iso_c_binding, only: c_double, c_int32_t, c_int64_t
  use, intrinsic :: ieee_arithmetic, only: ieee_value, ieee_quiet_nan
  use ellipsa
  implicit none
  integer, parameter :: p = 7, max_rows = 2000
  character(len=1024) :: reference_file, new_file, model_file
  character(len=32) :: names(p), ref_ids(max_rows), new_ids(max_rows)
  real(c_double), allocatable :: ref(:, :), new(:, :), d2(:), pv(:), contrib(:, :)
  integer(c_int32_t), allocatable :: flag(:)
  type(ellipsa_model) :: profile
  character(len=:), allocatable :: message
  integer :: status, n_ref, n_new, i, top
  real(c_double) :: h

  if (command_argument_count() /= 3) then
     write(*, '(a)') "usage: screen_new_batch REFERENCE.csv NEW.csv MODEL_OUT.json"
     stop 2
  end if
  call get_command_argument(1, reference_file)
  call get_command_argument(2, new_file)
  call get_command_argument(3, model_file)
  allocate(ref(max_rows, p), new(max_rows, p))
  call read_mould(trim(reference_file), "A", ref, ref_ids, n_ref)
  call read_mould(trim(new_file), "A", new, new_ids, n_new)

  call ellipsa_fit(profile, ref(1:n_ref, :), status, method="mcd", seed=1_c_int64_t, &
       column_names=names, message=message)
  if (status /= ELLIPSA_OK) call fail("fit")
  call ellipsa_diagnostic(profile, "h", h, status)
  write(*, '(a,i0,a,i0,a)') "profile: MCD of ", n_ref, " mould A shots, ", p, " variables"
  write(*, '(a,i0,a)') "  h = ", nint(h), " shots in the final subset"

  allocate(d2(n_new), pv(n_new), flag(n_new), contrib(n_new, p))
  ! new(1:n_new, :) is a section of a larger array: passed in place, no copy.
  call ellipsa_score(profile, new(1:n_new, :), status, squared_distance=d2, p_value=pv, flag=flag, &
       contribution=contrib, level=0.975_c_double, message=message)
  if (status /= ELLIPSA_OK) call fail("score")
  write(*, '(a,i0,a,i0,a)') "new batch: ", count(flag == 1), " of ", n_new, &
       " mould A shots flagged at level 0.975"
  do i = 1, n_new
     if (flag(i) /= 1) cycle
     top = maxloc(contrib(i, :), 1)
     write(*, '(2x,a8,a,f9.2,a,es9.2,a,a)') new_ids(i), " d2 =", d2(i), "  p =", pv(i), &
          "  most from ", trim(names(top))
  end do

  call ellipsa_write_model(profile, trim(model_file), status, message)
  if (status /= ELLIPSA_OK) call fail("write the model")
  write(*, '(a,a)') "profile written to ", trim(model_file)
  call ellipsa_free(profile)

contains

  subroutine fail(what)
    character(len=*), intent(in) :: what
    write(*, '(a,a,a,a,a)') "cannot ", what, ": ", ellipsa_status_name(status), " " // message
    stop 1
  end subroutine fail

  !> The rows of one mould from a demo file: shot_id, timestamp, mould, then
  !> the p numeric columns. A cell that does not read as a number (NA, empty)
  !> becomes NaN, which the library treats as missing.
  subroutine read_mould(path, mould, x, ids, n)
    character(len=*), intent(in) :: path, mould
    real(c_double), intent(out) :: x(:, :)
    character(len=*), intent(out) :: ids(:)
    integer, intent(out) :: n
    character(len=1024) :: line
    character(len=64) :: field
    integer :: u, ios, j, start, comma, k
    n = 0
    u = 41
    open(unit=u, file=path, status="old", action="read", iostat=ios)
    if (ios /= 0) then
       write(*, '(a,a)') "cannot open ", path
       stop 1
    end if
    read(u, '(a)') line                      ! header: the names of columns 4..10
    call split(line, 3, field, start)       ! past shot_id, timestamp, mould
    do j = 1, p
       comma = index(line(start:), ",")
       if (comma == 0) comma = len_trim(line(start:)) + 1
       names(j) = line(start:start + comma - 2)
       start = start + comma
    end do
    do
       read(u, '(a)', iostat=ios) line
       if (ios /= 0) exit
       call split(line, 3, field, start)
       if (trim(field) /= mould .or. n == size(x, 1)) cycle
       n = n + 1
       ids(n) = line(1:index(line, ",") - 1)
       do j = 1, p
          comma = index(line(start:), ",")
          if (comma == 0) comma = len_trim(line(start:)) + 1
          field = line(start:start + comma - 2)
          read(field, *, iostat=k) x(n, j)
          if (k /= 0) x(n, j) = ieee_value(x(n, j), ieee_quiet_nan)
          start = start + comma
       end do
    end do
    close(u)
  end subroutine read_mould

  !> field k of a comma-separated line, and where the field after it starts.
  subroutine split(line, k, field, after)
    character(len=*), intent(in) :: line
    integer, intent(in) :: k
    character(len=*), intent(out) :: field
    integer, intent(out) :: after
    integer :: j, comma, start
    start = 1
    field = ""
    do j = 1, k
       comma = index(line(start:), ",")
       if (comma == 0) comma = len_trim(line(start:)) + 1
       field = line(start:start + comma - 2)
       start = start + comma
    end do
    after = start
  end subroutine split

end program screen_new_batch
