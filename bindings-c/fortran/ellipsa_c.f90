! The C interface of ellipsa (capi/include/ellipsa.h) as Fortran 2003 sees it:
! the structs and the prototypes the Fortran binding (ellipsa.f90) calls,
! declared with bind(C), plus the two C library functions it needs (strlen,
! rename, remove). Not meant for direct use: `use ellipsa` instead.
module ellipsa_c
  use, intrinsic :: iso_c_binding
  implicit none
  public

  ! ---- C structs, laid out as in ellipsa.h ----------------------------------
  type, bind(C) :: c_matrix
     type(c_ptr) :: data = c_null_ptr
     integer(c_int64_t) :: rows = 0, cols = 0, row_stride = 0, col_stride = 0
  end type c_matrix

  type, bind(C) :: c_scores
     integer(c_int64_t) :: struct_size = 0
     type(c_ptr) :: squared_distance = c_null_ptr, p_value = c_null_ptr, flag = c_null_ptr, &
          observed = c_null_ptr, contribution = c_null_ptr, conditional_drop = c_null_ptr, &
          component = c_null_ptr, membership = c_null_ptr, log_density = c_null_ptr, &
          low_density = c_null_ptr
  end type c_scores

  ! ---- the C functions --------------------------------------------------------
  interface
     function c_version() bind(C, name="ellipsa_version")
       import :: c_ptr
       type(c_ptr) :: c_version
     end function c_version
     function c_status_string(status) bind(C, name="ellipsa_status_string")
       import :: c_ptr, c_int32_t
       integer(c_int32_t), value :: status
       type(c_ptr) :: c_status_string
     end function c_status_string
     function c_last_error() bind(C, name="ellipsa_last_error")
       import :: c_ptr
       type(c_ptr) :: c_last_error
     end function c_last_error
     function c_strlen(s) bind(C, name="strlen")
       import :: c_ptr, c_size_t
       type(c_ptr), value :: s
       integer(c_size_t) :: c_strlen
     end function c_strlen
     function c_rename(from, to) bind(C, name="rename")
       import :: c_char, c_int
       character(kind=c_char), intent(in) :: from(*), to(*)
       integer(c_int) :: c_rename
     end function c_rename
     function c_remove(path) bind(C, name="remove")
       import :: c_char, c_int
       character(kind=c_char), intent(in) :: path(*)
       integer(c_int) :: c_remove
     end function c_remove

     function c_chi2_quantile(out, probability, df) bind(C, name="ellipsa_chi2_quantile")
       import :: c_double, c_int32_t
       real(c_double), intent(out) :: out
       real(c_double), value :: probability, df
       integer(c_int32_t) :: c_chi2_quantile
     end function c_chi2_quantile
     function c_chi2_tail(out, x, df) bind(C, name="ellipsa_chi2_tail")
       import :: c_double, c_int32_t
       real(c_double), intent(out) :: out
       real(c_double), value :: x, df
       integer(c_int32_t) :: c_chi2_tail
     end function c_chi2_tail
     function c_f_quantile(out, probability, df1, df2) bind(C, name="ellipsa_f_quantile")
       import :: c_double, c_int32_t
       real(c_double), intent(out) :: out
       real(c_double), value :: probability, df1, df2
       integer(c_int32_t) :: c_f_quantile
     end function c_f_quantile
     function c_f_tail(out, x, df1, df2) bind(C, name="ellipsa_f_tail")
       import :: c_double, c_int32_t
       real(c_double), intent(out) :: out
       real(c_double), value :: x, df1, df2
       integer(c_int32_t) :: c_f_tail
     end function c_f_tail
     function c_beta_quantile(out, probability, a, b) bind(C, name="ellipsa_beta_quantile")
       import :: c_double, c_int32_t
       real(c_double), intent(out) :: out
       real(c_double), value :: probability, a, b
       integer(c_int32_t) :: c_beta_quantile
     end function c_beta_quantile
     function c_beta_tail(out, x, a, b) bind(C, name="ellipsa_beta_tail")
       import :: c_double, c_int32_t
       real(c_double), intent(out) :: out
       real(c_double), value :: x, a, b
       integer(c_int32_t) :: c_beta_tail
     end function c_beta_tail
     function c_hotelling_limit(out, phase, m, p, alpha) bind(C, name="ellipsa_hotelling_limit")
       import :: c_double, c_int32_t, c_int64_t
       real(c_double), intent(out) :: out
       integer(c_int32_t), value :: phase
       integer(c_int64_t), value :: m, p
       real(c_double), value :: alpha
       integer(c_int32_t) :: c_hotelling_limit
     end function c_hotelling_limit

     function c_fit_options_create(out, method) bind(C, name="ellipsa_fit_options_create")
       import :: c_ptr, c_int32_t
       type(c_ptr), intent(out) :: out
       integer(c_int32_t), value :: method
       integer(c_int32_t) :: c_fit_options_create
     end function c_fit_options_create
     subroutine c_fit_options_destroy(options) bind(C, name="ellipsa_fit_options_destroy")
       import :: c_ptr
       type(c_ptr), value :: options
     end subroutine c_fit_options_destroy
     function c_method_from_name(out, name) bind(C, name="ellipsa_method_from_name")
       import :: c_int32_t, c_char
       integer(c_int32_t), intent(out) :: out
       character(kind=c_char), intent(in) :: name(*)
       integer(c_int32_t) :: c_method_from_name
     end function c_method_from_name
     function c_method_name(method) bind(C, name="ellipsa_method_name")
       import :: c_ptr, c_int32_t
       integer(c_int32_t), value :: method
       type(c_ptr) :: c_method_name
     end function c_method_name
     function c_structure_from_name(out, name) bind(C, name="ellipsa_structure_from_name")
       import :: c_int32_t, c_char
       integer(c_int32_t), intent(out) :: out
       character(kind=c_char), intent(in) :: name(*)
       integer(c_int32_t) :: c_structure_from_name
     end function c_structure_from_name
     function c_structure_name(structure) bind(C, name="ellipsa_structure_name")
       import :: c_ptr, c_int32_t
       integer(c_int32_t), value :: structure
       type(c_ptr) :: c_structure_name
     end function c_structure_name
     function c_missing_from_name(out, name) bind(C, name="ellipsa_missing_from_name")
       import :: c_int32_t, c_char
       integer(c_int32_t), intent(out) :: out
       character(kind=c_char), intent(in) :: name(*)
       integer(c_int32_t) :: c_missing_from_name
     end function c_missing_from_name
     function c_missing_name(policy) bind(C, name="ellipsa_missing_name")
       import :: c_ptr, c_int32_t
       integer(c_int32_t), value :: policy
       type(c_ptr) :: c_missing_name
     end function c_missing_name
     function c_set_divisor(options, divisor) bind(C, name="ellipsa_fit_options_set_divisor")
       import :: c_ptr, c_int32_t
       type(c_ptr), value :: options
       integer(c_int32_t), value :: divisor
       integer(c_int32_t) :: c_set_divisor
     end function c_set_divisor
     function c_set_missing(options, policy) bind(C, name="ellipsa_fit_options_set_missing")
       import :: c_ptr, c_int32_t
       type(c_ptr), value :: options
       integer(c_int32_t), value :: policy
       integer(c_int32_t) :: c_set_missing
     end function c_set_missing
     function c_set_reference(options, reference) bind(C, name="ellipsa_fit_options_set_reference")
       import :: c_ptr, c_int32_t
       type(c_ptr), value :: options
       integer(c_int32_t), value :: reference
       integer(c_int32_t) :: c_set_reference
     end function c_set_reference
     function c_set_alpha(options, alpha) bind(C, name="ellipsa_fit_options_set_alpha")
       import :: c_ptr, c_int32_t, c_double
       type(c_ptr), value :: options
       real(c_double), value :: alpha
       integer(c_int32_t) :: c_set_alpha
     end function c_set_alpha
     function c_set_seed(options, seed) bind(C, name="ellipsa_fit_options_set_seed")
       ! uint64_t in C: Fortran has no unsigned type; a seed >= 0 passes unchanged.
       import :: c_ptr, c_int32_t, c_int64_t
       type(c_ptr), value :: options
       integer(c_int64_t), value :: seed
       integer(c_int32_t) :: c_set_seed
     end function c_set_seed
     function c_set_column_names(options, names, count) bind(C, name="ellipsa_fit_options_set_column_names")
       import :: c_ptr, c_int32_t, c_int64_t
       type(c_ptr), value :: options
       type(c_ptr), intent(in) :: names(*)
       integer(c_int64_t), value :: count
       integer(c_int32_t) :: c_set_column_names
     end function c_set_column_names

     function c_model_fit(out, data, options) bind(C, name="ellipsa_model_fit")
       import :: c_ptr, c_int32_t, c_matrix
       type(c_ptr), intent(out) :: out
       type(c_matrix), intent(in) :: data
       type(c_ptr), value :: options
       integer(c_int32_t) :: c_model_fit
     end function c_model_fit
     subroutine c_model_destroy(model) bind(C, name="ellipsa_model_destroy")
       import :: c_ptr
       type(c_ptr), value :: model
     end subroutine c_model_destroy
     function c_model_describe(kind, method, p, components, model) bind(C, name="ellipsa_model_describe")
       import :: c_ptr, c_int32_t, c_int64_t
       integer(c_int32_t), intent(out) :: kind, method, components
       integer(c_int64_t), intent(out) :: p
       type(c_ptr), value :: model
       integer(c_int32_t) :: c_model_describe
     end function c_model_describe
     function c_model_rows(used, dropped, model) bind(C, name="ellipsa_model_rows")
       import :: c_ptr, c_int32_t, c_int64_t
       integer(c_int64_t), intent(out) :: used, dropped
       type(c_ptr), value :: model
       integer(c_int32_t) :: c_model_rows
     end function c_model_rows
     function c_model_column_name(out, model, j) bind(C, name="ellipsa_model_column_name")
       import :: c_ptr, c_int32_t, c_int64_t
       type(c_ptr), intent(out) :: out
       type(c_ptr), value :: model
       integer(c_int64_t), value :: j
       integer(c_int32_t) :: c_model_column_name
     end function c_model_column_name
     function c_model_component(location, location_capacity, scatter, scatter_capacity, weight, model, k) &
          bind(C, name="ellipsa_model_component")
       import :: c_ptr, c_int32_t, c_int64_t, c_double
       type(c_ptr), value :: location, scatter, weight
       integer(c_int64_t), value :: location_capacity, scatter_capacity
       type(c_ptr), value :: model
       integer(c_int32_t), value :: k
       integer(c_int32_t) :: c_model_component
     end function c_model_component
     function c_model_diagnostic(out, model, name) bind(C, name="ellipsa_model_diagnostic")
       import :: c_ptr, c_int32_t, c_double, c_char
       real(c_double), intent(out) :: out
       type(c_ptr), value :: model
       character(kind=c_char), intent(in) :: name(*)
       integer(c_int32_t) :: c_model_diagnostic
     end function c_model_diagnostic
     function c_model_score_v2(out, model, data, level, reference) bind(C, name="ellipsa_model_score_v2")
       import :: c_ptr, c_int32_t, c_double, c_matrix, c_scores
       type(c_scores), intent(inout) :: out
       type(c_ptr), value :: model
       type(c_matrix), intent(in) :: data
       real(c_double), value :: level
       integer(c_int32_t), value :: reference
       integer(c_int32_t) :: c_model_score_v2
     end function c_model_score_v2
     function c_model_save(text, length, model) bind(C, name="ellipsa_model_save")
       import :: c_ptr, c_int32_t, c_int64_t
       type(c_ptr), intent(out) :: text
       integer(c_int64_t), intent(out) :: length
       type(c_ptr), value :: model
       integer(c_int32_t) :: c_model_save
     end function c_model_save
     subroutine c_text_free(text) bind(C, name="ellipsa_text_free")
       import :: c_ptr
       type(c_ptr), value :: text
     end subroutine c_text_free
     function c_model_load(out, text, length) bind(C, name="ellipsa_model_load")
       import :: c_ptr, c_int32_t, c_int64_t, c_char
       type(c_ptr), intent(out) :: out
       character(kind=c_char), intent(in) :: text(*)
       integer(c_int64_t), value :: length
       integer(c_int32_t) :: c_model_load
     end function c_model_load
  end interface

end module ellipsa_c
