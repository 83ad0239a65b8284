! Fortran 2003 binding of the ellipsa C interface (capi/include/ellipsa.h),
! through the intrinsic module iso_c_binding: no C glue, nothing computed here.
! Every number comes from libellipsa; this module passes Fortran arrays as
! strided views, converts character strings, and returns the status of each
! call with the library's message.
!
! Conventions (README.md beside this file):
!  - data are x(n, p): rows are observations, columns variables, as Fortran
!    stores them (column-major). The view passed to the library is the array
!    itself, sections with positive strides included (x(1:n:2, :) is read in
!    place); only an array with a negative stride is copied first;
!  - every procedure has an integer `status` (ELLIPSA_OK = 0 on success, else
!    one of the ELLIPSA_ codes below) and an optional `message` (deferred-
!    length character) that receives the library's text for the failure, read
!    right after the failing call; "" on success;
!  - input strings: trailing blanks are dropped, the rest is passed with a
!    terminating NUL; a string that holds a NUL is refused (ELLIPSA_ERR_ARGUMENT);
!  - row and component numbers are 1-based, as in Fortran.
! A flag is statistical evidence at the chosen level, not a verdict on a part,
! a batch or a person (README.md of the project, "Caution").
module ellipsa
  use, intrinsic :: iso_c_binding
  use ellipsa_c
  implicit none
  private

  ! ---- constants of ellipsa.h ------------------------------------------------
  integer, parameter, public :: ELLIPSA_OK = 0, ELLIPSA_ERR_NULL = 1, ELLIPSA_ERR_ARGUMENT = 2, &
       ELLIPSA_ERR_SHAPE = 3, ELLIPSA_ERR_STATE = 4, ELLIPSA_ERR_DATA = 10, ELLIPSA_ERR_FORMAT = 11, &
       ELLIPSA_ERR_MEMORY = 12, ELLIPSA_ERR_CANCELLED = 13, ELLIPSA_ERR_INTERNAL = 14, &
       ELLIPSA_NUM_SINGULAR = 20, ELLIPSA_NUM_NOT_CONVERGED = 21, ELLIPSA_NUM_EXACT_FIT = 22
  integer, parameter, public :: ELLIPSA_KIND_GAUSSIAN = 1, ELLIPSA_KIND_MIXTURE = 2
  integer, parameter, public :: ELLIPSA_PHASE_ONE = 1, ELLIPSA_PHASE_TWO = 2
  integer, parameter, public :: ELLIPSA_REFERENCE_MODEL = 0, ELLIPSA_REFERENCE_CHI2 = 1, &
       ELLIPSA_REFERENCE_NEW_ROWS = 2, ELLIPSA_REFERENCE_FITTING_ROWS = 3
  integer, parameter, public :: ELLIPSA_DIVISOR_N = 1, ELLIPSA_DIVISOR_N_MINUS_1 = 2
  integer, parameter, public :: ELLIPSA_MISSING_DROP_ROWS = 1, ELLIPSA_MISSING_REFUSE = 2, &
       ELLIPSA_MISSING_EM = 3
  integer, parameter, public :: ELLIPSA_METHOD_CLASSICAL = 1, ELLIPSA_METHOD_LEDOIT_WOLF = 2, &
       ELLIPSA_METHOD_OAS = 3, ELLIPSA_METHOD_MCD = 4, ELLIPSA_METHOD_DETMCD = 5, &
       ELLIPSA_METHOD_MRCD = 6, ELLIPSA_METHOD_MIXTURE = 7
  integer, parameter, public :: ELLIPSA_STRUCTURE_FULL = 1, ELLIPSA_STRUCTURE_DIAGONAL = 2, &
       ELLIPSA_STRUCTURE_TIED = 3, ELLIPSA_STRUCTURE_SPHERICAL = 4, ELLIPSA_STRUCTURE_ALL = 5

  !> A fitted model. Free it with ellipsa_free (a freed or never-fitted model
  !> is refused by every query with ELLIPSA_ERR_NULL).
  type, public :: ellipsa_model
     private
     type(c_ptr) :: handle = c_null_ptr
  end type ellipsa_model

  public :: ellipsa_fit, ellipsa_score, ellipsa_free, ellipsa_is_set, ellipsa_describe, &
       ellipsa_rows, ellipsa_component, ellipsa_diagnostic, ellipsa_column_name, &
       ellipsa_to_text, ellipsa_from_text, ellipsa_write_model, ellipsa_read_model, &
       ellipsa_chi2_quantile, ellipsa_chi2_tail, ellipsa_f_quantile, ellipsa_f_tail, &
       ellipsa_beta_quantile, ellipsa_beta_tail, ellipsa_hotelling_limit, &
       ellipsa_last_error, ellipsa_status_name, ellipsa_library_version, &
       ellipsa_method_name, ellipsa_method_from_name, ellipsa_structure_name, &
       ellipsa_structure_from_name, ellipsa_missing_name, ellipsa_missing_from_name

contains

  ! ---- strings ------------------------------------------------------------------
  !> Copies a NUL-terminated C string (NULL gives "").
  function from_c(p) result(s)
    type(c_ptr), intent(in) :: p
    character(len=:), allocatable :: s
    character(kind=c_char), pointer :: chars(:)
    integer :: n, i
    if (.not. c_associated(p)) then
       s = ""
       return
    end if
    n = int(c_strlen(p))
    call c_f_pointer(p, chars, [n])
    allocate(character(len=n) :: s)
    do i = 1, n
       s(i:i) = chars(i)
    end do
  end function from_c

  !> name without trailing blanks, NUL-terminated; ok is false when it holds a NUL.
  subroutine to_c(name, buffer, ok)
    character(len=*), intent(in) :: name
    character(kind=c_char), allocatable, intent(out) :: buffer(:)
    logical, intent(out) :: ok
    integer :: n, i
    n = len_trim(name)
    allocate(buffer(n + 1))
    ok = index(name(1:n), c_null_char) == 0
    do i = 1, n
       buffer(i) = name(i:i)
    end do
    buffer(n + 1) = c_null_char
  end subroutine to_c

  !> The message for a status just returned by the library: "" for ELLIPSA_OK,
  !> else the library's thread-local text, copied at once. (Each public
  !> procedure assigns its optional `message` itself: gfortran 12 loses the
  !> length of an optional deferred-length dummy passed on to another procedure.)
  function call_message(status) result(s)
    integer, intent(in) :: status
    character(len=:), allocatable :: s
    if (status == ELLIPSA_OK) then
       s = ""
    else
       s = from_c(c_last_error())
    end if
  end function call_message

  !> The detailed message of the last failed ellipsa call on this thread.
  function ellipsa_last_error() result(s)
    character(len=:), allocatable :: s
    s = from_c(c_last_error())
  end function ellipsa_last_error

  !> The C name of a status code, e.g. "ELLIPSA_ERR_DATA".
  function ellipsa_status_name(status) result(s)
    integer, intent(in) :: status
    character(len=:), allocatable :: s
    s = from_c(c_status_string(int(status, c_int32_t)))
  end function ellipsa_status_name

  !> The version of the loaded library, e.g. "0.1.0".
  function ellipsa_library_version() result(s)
    character(len=:), allocatable :: s
    s = from_c(c_version())
  end function ellipsa_library_version

  ! ---- names of methods, covariance structures, missing-value policies --------------
  ! The library's own names (the model file, the batch tool and every binding
  ! use them): "classical", "ledoit-wolf", ...; "full", "diagonal", "tied",
  ! "spherical", "all"; "drop", "refuse", "em". A code the library does not
  ! know is named "unknown"; an unknown name gives ELLIPSA_ERR_ARGUMENT with a
  ! message that lists the names.

  !> The name of an ELLIPSA_METHOD_ code.
  function ellipsa_method_name(code) result(s)
    integer, intent(in) :: code
    character(len=:), allocatable :: s
    s = from_c(c_method_name(int(code, c_int32_t)))
  end function ellipsa_method_name

  !> The name of an ELLIPSA_STRUCTURE_ code.
  function ellipsa_structure_name(code) result(s)
    integer, intent(in) :: code
    character(len=:), allocatable :: s
    s = from_c(c_structure_name(int(code, c_int32_t)))
  end function ellipsa_structure_name

  !> The name of an ELLIPSA_MISSING_ code.
  function ellipsa_missing_name(code) result(s)
    integer, intent(in) :: code
    character(len=:), allocatable :: s
    s = from_c(c_missing_name(int(code, c_int32_t)))
  end function ellipsa_missing_name

  !> Parses a name with the library's parser of `kind` (1 method, 2 structure,
  !> 3 missing-value policy); code is 0 unless the status is ELLIPSA_OK.
  integer function parse_name(kind, name, code) result(status)
    integer, intent(in) :: kind
    character(len=*), intent(in) :: name
    integer, intent(out) :: code
    character(kind=c_char), allocatable :: buffer(:)
    integer(c_int32_t) :: c_code, c_status
    logical :: ok
    code = 0
    call to_c(name, buffer, ok)
    if (.not. ok) then
       status = ELLIPSA_ERR_ARGUMENT
       return
    end if
    c_code = 0
    select case (kind)
    case (1)
       c_status = c_method_from_name(c_code, buffer)
    case (2)
       c_status = c_structure_from_name(c_code, buffer)
    case default
       c_status = c_missing_from_name(c_code, buffer)
    end select
    status = int(c_status)
    if (status == ELLIPSA_OK) code = int(c_code)
  end function parse_name

  !> The ELLIPSA_METHOD_ code of a name (trailing blanks ignored).
  subroutine ellipsa_method_from_name(name, code, status, message)
    character(len=*), intent(in) :: name
    integer, intent(out) :: code, status
    character(len=:), allocatable, intent(out), optional :: message
    status = parse_name(1, name, code)
    if (present(message)) message = name_message(status, name)
  end subroutine ellipsa_method_from_name

  !> The ELLIPSA_STRUCTURE_ code of a name (trailing blanks ignored).
  subroutine ellipsa_structure_from_name(name, code, status, message)
    character(len=*), intent(in) :: name
    integer, intent(out) :: code, status
    character(len=:), allocatable, intent(out), optional :: message
    status = parse_name(2, name, code)
    if (present(message)) message = name_message(status, name)
  end subroutine ellipsa_structure_from_name

  !> The ELLIPSA_MISSING_ code of a name (trailing blanks ignored).
  subroutine ellipsa_missing_from_name(name, code, status, message)
    character(len=*), intent(in) :: name
    integer, intent(out) :: code, status
    character(len=:), allocatable, intent(out), optional :: message
    status = parse_name(3, name, code)
    if (present(message)) message = name_message(status, name)
  end subroutine ellipsa_missing_from_name

  !> The message after parse_name: the library's, or ours for a name holding a NUL.
  function name_message(status, name) result(s)
    integer, intent(in) :: status
    character(len=*), intent(in) :: name
    character(len=:), allocatable :: s
    if (status /= ELLIPSA_OK .and. index(name, c_null_char) /= 0) then
       s = "the name holds a NUL character"
    else
       s = call_message(status)
    end if
  end function name_message

  ! ---- views --------------------------------------------------------------------
  !> The address held by a C pointer, as an integer: how the strides of an
  !> array section are measured (transfer of a c_ptr is processor-dependent
  !> in the standard; gfortran, like every compiler on a flat address space,
  !> gives the address).
  function address(p) result(a)
    type(c_ptr), intent(in) :: p
    integer(c_intptr_t) :: a
    a = transfer(p, a)
  end function address

  !> A view of x(n, p) without a copy when its strides are >= 0 (every array and
  !> section Fortran can pass, except one with a negative stride, which is copied
  !> into scratch first).
  subroutine make_view(x, view, scratch)
    real(c_double), intent(in), target :: x(:, :)
    type(c_matrix), intent(out) :: view
    real(c_double), allocatable, target, intent(inout) :: scratch(:, :)
    integer(c_intptr_t) :: base, rs, cs
    integer(c_intptr_t), parameter :: bytes = 8
    view%rows = size(x, 1)
    view%cols = size(x, 2)
    view%row_stride = 1
    view%col_stride = max(view%rows, 1_c_int64_t)
    view%data = c_null_ptr
    if (view%rows == 0 .or. view%cols == 0) return
    base = address(c_loc(x(1, 1)))
    rs = bytes
    cs = bytes * view%rows
    if (view%rows > 1) rs = address(c_loc(x(2, 1))) - base
    if (view%cols > 1) cs = address(c_loc(x(1, 2))) - base
    if (rs >= 0 .and. cs >= 0 .and. mod(rs, bytes) == 0 .and. mod(cs, bytes) == 0) then
       view%data = c_loc(x(1, 1))
       view%row_stride = rs / bytes
       view%col_stride = cs / bytes
    else
       if (allocated(scratch)) deallocate(scratch)
       allocate(scratch(size(x, 1), size(x, 2)))
       scratch = x
       view%data = c_loc(scratch(1, 1))
    end if
  end subroutine make_view

  logical function unit_stride_real(v)
    real(c_double), intent(in), target :: v(:)
    unit_stride_real = .true.
    if (size(v) > 1) unit_stride_real = address(c_loc(v(2))) - address(c_loc(v(1))) == 8
  end function unit_stride_real

  logical function unit_stride_int(v)
    integer(c_int32_t), intent(in), target :: v(:)
    unit_stride_int = .true.
    if (size(v) > 1) unit_stride_int = address(c_loc(v(2))) - address(c_loc(v(1))) == 4
  end function unit_stride_int

  ! ---- model handle -----------------------------------------------------------------
  !> Frees the model; a freed or never-fitted model is a no-op.
  subroutine ellipsa_free(model)
    type(ellipsa_model), intent(inout) :: model
    call c_model_destroy(model%handle)
    model%handle = c_null_ptr
  end subroutine ellipsa_free

  !> True when the model holds a fitted or loaded model.
  logical function ellipsa_is_set(model)
    type(ellipsa_model), intent(in) :: model
    ellipsa_is_set = c_associated(model%handle)
  end function ellipsa_is_set

  !> Fits a model to the rows of x(n, p). method is the name the batch tool
  !> uses ("classical", "ledoit-wolf", "oas", "mcd", "detmcd", "mrcd",
  !> "mixture"; default "classical"). Optional settings are passed to the
  !> library only when present (defaults in ellipsa.h). A model already in
  !> `model` is freed first. Rows with NaN are dropped and counted (ellipsa_rows).
  subroutine ellipsa_fit(model, x, status, method, alpha, seed, divisor, missing, reference, &
       column_names, message)
    type(ellipsa_model), intent(inout) :: model
    real(c_double), intent(in), target :: x(:, :)
    integer, intent(out) :: status
    character(len=*), intent(in), optional :: method
    real(c_double), intent(in), optional :: alpha
    integer(c_int64_t), intent(in), optional :: seed
    integer, intent(in), optional :: divisor, missing, reference
    character(len=*), intent(in), optional :: column_names(:)
    character(len=:), allocatable, intent(out), optional :: message
    type(c_ptr) :: options, out
    type(c_matrix) :: view
    real(c_double), allocatable, target :: scratch(:, :)
    character(kind=c_char), allocatable :: name(:)
    character(kind=c_char), allocatable, target :: names(:, :)
    type(c_ptr), allocatable :: pointers(:)
    integer(c_int32_t) :: code, method_code
    logical :: ok
    integer :: j, i, width

    call ellipsa_free(model)
    method_code = 1
    if (present(method)) then
       call to_c(method, name, ok)
       if (.not. ok) then
          status = ELLIPSA_ERR_ARGUMENT
          if (present(message)) message = "ellipsa_fit: the method name holds a NUL character"
          return
       end if
       code = c_method_from_name(method_code, name)
       if (code /= ELLIPSA_OK) then
          status = int(code)
          if (present(message)) message = call_message(status)
          return
       end if
    end if
    code = c_fit_options_create(options, method_code)
    if (code /= ELLIPSA_OK) then
       status = int(code)
       if (present(message)) message = call_message(status)
       return
    end if
    if (present(divisor)) then
       if (code == ELLIPSA_OK) code = c_set_divisor(options, int(divisor, c_int32_t))
    end if
    if (present(missing)) then
       if (code == ELLIPSA_OK) code = c_set_missing(options, int(missing, c_int32_t))
    end if
    if (present(reference)) then
       if (code == ELLIPSA_OK) code = c_set_reference(options, int(reference, c_int32_t))
    end if
    if (present(alpha)) then
       if (code == ELLIPSA_OK) code = c_set_alpha(options, alpha)
    end if
    if (present(seed)) then
       if (code == ELLIPSA_OK) code = c_set_seed(options, seed)
    end if
    if (present(column_names) .and. code == ELLIPSA_OK) then
       width = 0
       do j = 1, size(column_names)
          width = max(width, len_trim(column_names(j)))
          if (index(column_names(j)(1:len_trim(column_names(j))), c_null_char) /= 0) then
             call c_fit_options_destroy(options)
             status = ELLIPSA_ERR_ARGUMENT
             if (present(message)) message = "ellipsa_fit: a column name holds a NUL character"
             return
          end if
       end do
       allocate(names(width + 1, max(size(column_names), 1)), pointers(max(size(column_names), 1)))
       names = c_null_char
       do j = 1, size(column_names)
          do i = 1, len_trim(column_names(j))
             names(i, j) = column_names(j)(i:i)
          end do
          pointers(j) = c_loc(names(1, j))
       end do
       code = c_set_column_names(options, pointers, int(size(column_names), c_int64_t))
    end if
    if (code == ELLIPSA_OK) then
       call make_view(x, view, scratch)
       code = c_model_fit(out, view, options)
       if (code == ELLIPSA_OK) model%handle = out
    end if
    status = int(code)
    if (present(message)) message = call_message(status)  ! before destroy: keeps the message of the failure
    call c_fit_options_destroy(options)
  end subroutine ellipsa_fit

  !> Scores the rows of x(n, p) (the model's columns in its order) at level
  !> (default 0.975) against the reference (default ELLIPSA_REFERENCE_MODEL).
  !> Each output is optional; its size must fit: n values, contribution(n, p)
  !> (each row's terms sum to its squared distance). flag(i) is 1 flagged, 0
  !> not, -1 not scorable; observed(i) the coordinates used.
  subroutine ellipsa_score(model, x, status, squared_distance, p_value, flag, observed, contribution, &
       level, reference, message)
    type(ellipsa_model), intent(in) :: model
    real(c_double), intent(in), target :: x(:, :)
    integer, intent(out) :: status
    real(c_double), intent(out), optional, target :: squared_distance(:), p_value(:)
    integer(c_int32_t), intent(out), optional, target :: flag(:), observed(:)
    real(c_double), intent(out), optional :: contribution(:, :)
    real(c_double), intent(in), optional :: level
    integer, intent(in), optional :: reference
    character(len=:), allocatable, intent(out), optional :: message
    type(c_scores), target :: s(2)
    type(c_matrix) :: view
    real(c_double), allocatable, target :: scratch(:, :), d2_tmp(:), pv_tmp(:), contrib_tmp(:, :)
    integer(c_int32_t), allocatable, target :: flag_tmp(:), obs_tmp(:)
    real(c_double) :: lvl
    integer(c_int32_t) :: ref, code
    integer :: n

    n = size(x, 1)
    lvl = 0.975_c_double
    if (present(level)) lvl = level
    ref = ELLIPSA_REFERENCE_MODEL
    if (present(reference)) ref = int(reference, c_int32_t)
    if (.not. (fits(squared_distance_size()) .and. fits(p_value_size()) .and. fits(flag_size()) &
         .and. fits(observed_size()))) then
       status = ELLIPSA_ERR_SHAPE
       if (present(message)) message = "ellipsa_score: an output array does not have one element per row of x"
       return
    end if
    if (present(contribution)) then
       if (size(contribution, 1) /= n .or. size(contribution, 2) /= size(x, 2)) then
          status = ELLIPSA_ERR_SHAPE
          if (present(message)) message = "ellipsa_score: contribution must be n x p, the shape of x"
          return
       end if
    end if
    ! struct_size: the distance between two elements of an array of the struct (sizeof without F2008).
    s(1)%struct_size = address(c_loc(s(2))) - address(c_loc(s(1)))
    if (n > 0) then
       if (present(squared_distance)) then
          if (unit_stride_real(squared_distance)) then
             s(1)%squared_distance = c_loc(squared_distance(1))
          else
             allocate(d2_tmp(n))
             s(1)%squared_distance = c_loc(d2_tmp(1))
          end if
       end if
       if (present(p_value)) then
          if (unit_stride_real(p_value)) then
             s(1)%p_value = c_loc(p_value(1))
          else
             allocate(pv_tmp(n))
             s(1)%p_value = c_loc(pv_tmp(1))
          end if
       end if
       if (present(flag)) then
          if (unit_stride_int(flag)) then
             s(1)%flag = c_loc(flag(1))
          else
             allocate(flag_tmp(n))
             s(1)%flag = c_loc(flag_tmp(1))
          end if
       end if
       if (present(observed)) then
          if (unit_stride_int(observed)) then
             s(1)%observed = c_loc(observed(1))
          else
             allocate(obs_tmp(n))
             s(1)%observed = c_loc(obs_tmp(1))
          end if
       end if
       if (present(contribution) .and. size(x, 2) > 0) then
          allocate(contrib_tmp(size(x, 2), n))  ! the library writes n x p row-major
          s(1)%contribution = c_loc(contrib_tmp(1, 1))
       end if
    end if
    call make_view(x, view, scratch)
    code = c_model_score_v2(s(1), model%handle, view, lvl, ref)
    status = int(code)
    if (present(message)) message = call_message(status)
    if (code /= ELLIPSA_OK) return
    if (allocated(d2_tmp)) squared_distance = d2_tmp
    if (allocated(pv_tmp)) p_value = pv_tmp
    if (allocated(flag_tmp)) flag = flag_tmp
    if (allocated(obs_tmp)) observed = obs_tmp
    if (allocated(contrib_tmp)) contribution = transpose(contrib_tmp)

  contains
    logical function fits(k)
      integer, intent(in) :: k
      fits = k < 0 .or. k == n
    end function fits
    integer function squared_distance_size()
      squared_distance_size = -1
      if (present(squared_distance)) squared_distance_size = size(squared_distance)
    end function squared_distance_size
    integer function p_value_size()
      p_value_size = -1
      if (present(p_value)) p_value_size = size(p_value)
    end function p_value_size
    integer function flag_size()
      flag_size = -1
      if (present(flag)) flag_size = size(flag)
    end function flag_size
    integer function observed_size()
      observed_size = -1
      if (present(observed)) observed_size = size(observed)
    end function observed_size
  end subroutine ellipsa_score

  ! ---- model queries ------------------------------------------------------------------
  !> kind (ELLIPSA_KIND_GAUSSIAN or _MIXTURE), method name, dimension p, components K.
  subroutine ellipsa_describe(model, status, kind, method, dimension, components, message)
    type(ellipsa_model), intent(in) :: model
    integer, intent(out) :: status
    integer, intent(out), optional :: kind, components
    character(len=:), allocatable, intent(out), optional :: method
    integer(c_int64_t), intent(out), optional :: dimension
    character(len=:), allocatable, intent(out), optional :: message
    integer(c_int32_t) :: k, m, c, code
    integer(c_int64_t) :: p
    code = c_model_describe(k, m, p, c, model%handle)
    status = int(code)
    if (present(message)) message = call_message(status)
    if (code /= ELLIPSA_OK) return
    if (present(kind)) kind = int(k)
    if (present(method)) method = from_c(c_method_name(m))
    if (present(dimension)) dimension = p
    if (present(components)) components = int(c)
  end subroutine ellipsa_describe

  !> Rows the fit used and rows it dropped for missing values.
  subroutine ellipsa_rows(model, used, dropped, status, message)
    type(ellipsa_model), intent(in) :: model
    integer(c_int64_t), intent(out) :: used, dropped
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    status = int(c_model_rows(used, dropped, model%handle))
    if (present(message)) message = call_message(status)
  end subroutine ellipsa_rows

  !> Location(p), scatter(p, p) and weight of component k (1-based, default 1).
  subroutine ellipsa_component(model, status, location, scatter, weight, k, message)
    type(ellipsa_model), intent(in) :: model
    integer, intent(out) :: status
    real(c_double), intent(out), optional, target :: location(:)
    real(c_double), intent(out), optional :: scatter(:, :)
    real(c_double), intent(out), optional, target :: weight
    integer, intent(in), optional :: k
    character(len=:), allocatable, intent(out), optional :: message
    real(c_double), allocatable, target :: loc_tmp(:), sc_tmp(:, :)
    type(c_ptr) :: lp, sp, wp
    integer(c_int64_t) :: lcap, scap
    integer(c_int32_t) :: kk, code
    lp = c_null_ptr
    sp = c_null_ptr
    wp = c_null_ptr
    lcap = 0
    scap = 0
    kk = 0
    if (present(k)) kk = int(k - 1, c_int32_t)
    if (present(location)) then
       allocate(loc_tmp(size(location)))
       lp = c_loc(loc_tmp(1))
       lcap = size(location)
    end if
    if (present(scatter)) then
       if (size(scatter, 1) /= size(scatter, 2)) then
          status = ELLIPSA_ERR_SHAPE
          if (present(message)) message = "ellipsa_component: scatter must be square"
          return
       end if
       allocate(sc_tmp(size(scatter, 1), size(scatter, 2)))
       sp = c_loc(sc_tmp(1, 1))
       scap = size(scatter)
    end if
    if (present(weight)) wp = c_loc(weight)
    code = c_model_component(lp, lcap, sp, scap, wp, model%handle, kk)
    status = int(code)
    if (present(message)) message = call_message(status)
    if (code /= ELLIPSA_OK) return
    if (present(location)) location = loc_tmp
    if (present(scatter)) scatter = transpose(sc_tmp)  ! the library writes p x p row-major
  end subroutine ellipsa_component

  !> A named number describing the fit, e.g. "h", "log_det", "reference_rows" (ellipsa.h).
  subroutine ellipsa_diagnostic(model, name, value, status, message)
    type(ellipsa_model), intent(in) :: model
    character(len=*), intent(in) :: name
    real(c_double), intent(out) :: value
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    character(kind=c_char), allocatable :: cname(:)
    logical :: ok
    call to_c(name, cname, ok)
    if (.not. ok) then
       status = ELLIPSA_ERR_ARGUMENT
       if (present(message)) message = "ellipsa_diagnostic: the name holds a NUL character"
       return
    end if
    status = int(c_model_diagnostic(value, model%handle, cname))
    if (present(message)) message = call_message(status)
  end subroutine ellipsa_diagnostic

  !> The name of column j (1-based).
  subroutine ellipsa_column_name(model, j, name, status, message)
    type(ellipsa_model), intent(in) :: model
    integer, intent(in) :: j
    character(len=:), allocatable, intent(out) :: name
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    type(c_ptr) :: p
    integer(c_int32_t) :: code
    code = c_model_column_name(p, model%handle, int(j - 1, c_int64_t))
    status = int(code)
    if (present(message)) message = call_message(status)
    name = ""
    if (code == ELLIPSA_OK) name = from_c(p)
  end subroutine ellipsa_column_name

  ! ---- model files ---------------------------------------------------------------------
  !> The model file's text (JSON, docs/model-format.md).
  subroutine ellipsa_to_text(model, text, status, message)
    type(ellipsa_model), intent(in) :: model
    character(len=:), allocatable, intent(out) :: text
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    type(c_ptr) :: p
    integer(c_int64_t) :: length
    character(kind=c_char), pointer :: chars(:)
    integer(c_int32_t) :: code
    integer :: i
    code = c_model_save(p, length, model%handle)
    status = int(code)
    if (present(message)) message = call_message(status)
    text = ""
    if (code /= ELLIPSA_OK) return
    call c_f_pointer(p, chars, [length])
    deallocate(text)
    allocate(character(len=length) :: text)
    do i = 1, int(length)
       text(i:i) = chars(i)
    end do
    call c_text_free(p)
  end subroutine ellipsa_to_text

  !> A model from the text of a model file written by any binding (checked by the library).
  subroutine ellipsa_from_text(model, text, status, message)
    type(ellipsa_model), intent(inout) :: model
    character(len=*), intent(in) :: text
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    type(c_ptr) :: out
    integer(c_int32_t) :: code
    call ellipsa_free(model)
    code = c_model_load(out, text, int(len(text), c_int64_t))
    status = int(code)
    if (present(message)) message = call_message(status)
    if (code == ELLIPSA_OK) model%handle = out
  end subroutine ellipsa_from_text

  !> A free unit number (newunit= is Fortran 2008).
  integer function free_unit()
    logical :: opened
    do free_unit = 90, 999
       inquire(unit=free_unit, opened=opened)
       if (.not. opened) return
    end do
    free_unit = -1
  end function free_unit

  !> Writes the model file atomically: a temporary file beside it, renamed over
  !> path, so a reader never sees half a file and a failure leaves the old one.
  !> File errors give ELLIPSA_ERR_DATA with the system's message.
  subroutine ellipsa_write_model(model, path, status, message)
    type(ellipsa_model), intent(in) :: model
    character(len=*), intent(in) :: path
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    character(len=:), allocatable :: text, temp
    character(kind=c_char), allocatable :: cfrom(:), cto(:)
    character(len=256) :: why
    integer :: u, ios
    logical :: ok1, ok2
    call ellipsa_to_text(model, text, status)
    if (status /= ELLIPSA_OK) then
       if (present(message)) message = call_message(status)
       return
    end if
    temp = trim(path) // ".partial"
    call to_c(temp, cfrom, ok1)
    call to_c(path, cto, ok2)
    if (.not. (ok1 .and. ok2) .or. len_trim(path) == 0) then
       status = ELLIPSA_ERR_ARGUMENT
       if (present(message)) message = "ellipsa_write_model: the path is empty or holds a NUL"
       return
    end if
    u = free_unit()
    open(unit=u, file=temp, access="stream", form="unformatted", status="replace", action="write", &
         iostat=ios, iomsg=why)
    if (ios == 0) write(u, iostat=ios, iomsg=why) text
    if (ios == 0) then
       close(u, iostat=ios, iomsg=why)
    else
       close(u, status="delete")
    end if
    if (ios /= 0) then
       status = ELLIPSA_ERR_DATA
       if (present(message)) message = "ellipsa_write_model: " // trim(temp) // ": " // trim(why)
       return
    end if
    if (c_rename(cfrom, cto) /= 0) then
       ios = c_remove(cfrom)
       status = ELLIPSA_ERR_DATA
       if (present(message)) message = "ellipsa_write_model: cannot rename " // trim(temp) // " to " // trim(path)
       return
    end if
    status = ELLIPSA_OK
    if (present(message)) message = ""
  end subroutine ellipsa_write_model

  !> Reads a model file written by any binding or by the batch tool. A file
  !> that cannot be read gives ELLIPSA_ERR_DATA with the system's message; a
  !> file that is not a valid model, ELLIPSA_ERR_FORMAT from the library.
  subroutine ellipsa_read_model(model, path, status, message)
    type(ellipsa_model), intent(inout) :: model
    character(len=*), intent(in) :: path
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    character(len=:), allocatable :: text
    character(len=256) :: why
    integer :: u, ios, bytes
    logical :: exists
    call ellipsa_free(model)
    inquire(file=trim(path), exist=exists, size=bytes)
    if (.not. exists) then
       status = ELLIPSA_ERR_DATA
       if (present(message)) message = "ellipsa_read_model: " // trim(path) // ": no such file"
       return
    end if
    if (bytes < 0) then
       status = ELLIPSA_ERR_DATA
       if (present(message)) message = "ellipsa_read_model: " // trim(path) // ": its size cannot be determined"
       return
    end if
    allocate(character(len=bytes) :: text)
    u = free_unit()
    open(unit=u, file=trim(path), access="stream", form="unformatted", status="old", action="read", &
         iostat=ios, iomsg=why)
    if (ios == 0 .and. bytes > 0) read(u, iostat=ios, iomsg=why) text
    if (ios == 0) then
       close(u, iostat=ios, iomsg=why)
    else
       close(u)
    end if
    if (ios /= 0) then
       status = ELLIPSA_ERR_DATA
       if (present(message)) message = "ellipsa_read_model: " // trim(path) // ": " // trim(why)
       return
    end if
    call ellipsa_from_text(model, text, status)
    if (present(message)) message = call_message(status)
  end subroutine ellipsa_read_model

  ! ---- distributions and control limits ---------------------------------------------------
  !> Chi-square quantile: x with P(X <= x) = probability.
  subroutine ellipsa_chi2_quantile(x, probability, df, status, message)
    real(c_double), intent(out) :: x
    real(c_double), intent(in) :: probability, df
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    status = int(c_chi2_quantile(x, probability, df))
    if (present(message)) message = call_message(status)
  end subroutine ellipsa_chi2_quantile

  !> Chi-square upper tail P(X > x).
  subroutine ellipsa_chi2_tail(tail, x, df, status, message)
    real(c_double), intent(out) :: tail
    real(c_double), intent(in) :: x, df
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    status = int(c_chi2_tail(tail, x, df))
    if (present(message)) message = call_message(status)
  end subroutine ellipsa_chi2_tail

  !> F quantile: x with P(X <= x) = probability.
  subroutine ellipsa_f_quantile(x, probability, df1, df2, status, message)
    real(c_double), intent(out) :: x
    real(c_double), intent(in) :: probability, df1, df2
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    status = int(c_f_quantile(x, probability, df1, df2))
    if (present(message)) message = call_message(status)
  end subroutine ellipsa_f_quantile

  !> F upper tail P(X > x).
  subroutine ellipsa_f_tail(tail, x, df1, df2, status, message)
    real(c_double), intent(out) :: tail
    real(c_double), intent(in) :: x, df1, df2
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    status = int(c_f_tail(tail, x, df1, df2))
    if (present(message)) message = call_message(status)
  end subroutine ellipsa_f_tail

  !> Beta quantile: x with P(X <= x) = probability.
  subroutine ellipsa_beta_quantile(x, probability, a, b, status, message)
    real(c_double), intent(out) :: x
    real(c_double), intent(in) :: probability, a, b
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    status = int(c_beta_quantile(x, probability, a, b))
    if (present(message)) message = call_message(status)
  end subroutine ellipsa_beta_quantile

  !> Beta upper tail P(X > x).
  subroutine ellipsa_beta_tail(tail, x, a, b, status, message)
    real(c_double), intent(out) :: tail
    real(c_double), intent(in) :: x, a, b
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    status = int(c_beta_tail(tail, x, a, b))
    if (present(message)) message = call_message(status)
  end subroutine ellipsa_beta_tail

  !> Hotelling T^2 upper control limit for individual observations (Tracy,
  !> Young & Mason 1992); phase ELLIPSA_PHASE_ONE or _TWO, m reference rows,
  !> p variables, alpha the false-alarm probability per row.
  subroutine ellipsa_hotelling_limit(limit, phase, m, p, alpha, status, message)
    real(c_double), intent(out) :: limit
    integer, intent(in) :: phase
    integer(c_int64_t), intent(in) :: m, p
    real(c_double), intent(in) :: alpha
    integer, intent(out) :: status
    character(len=:), allocatable, intent(out), optional :: message
    status = int(c_hotelling_limit(limit, int(phase, c_int32_t), m, p, alpha))
    if (present(message)) message = call_message(status)
  end subroutine ellipsa_hotelling_limit

end module ellipsa
