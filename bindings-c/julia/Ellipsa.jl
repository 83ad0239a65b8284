# UNTESTED HERE: no Julia runtime was available where this file was written
# (Debian 12 ships no Julia package). Its ccalls are checked against
# capi/include/ellipsa.h by tests/bindings/check_julia_ccalls.py (names, argument
# counts and types, struct layouts), but the code has never run; run the example
# in README.md before relying on it.
#
# Julia binding of the ellipsa C interface, by ccall. Thin on purpose: every
# number comes from libellipsa; this module only passes arrays as strided views,
# owns handles (finalizers + close) and turns status codes into EllipsaError.
#
# Usage: include("Ellipsa.jl"); using .Ellipsa
# The shared library is opened as ENV["ELLIPSA_LIB"] if set when the file is
# included, else as "libellipsa" through the normal search (LD_LIBRARY_PATH, or
# push!(Libc.Libdl.DL_LOAD_PATH, dir) before including).
module Ellipsa

export EllipsaError, FitSettings, Model, fit, score, save, load, location, scatter,
       component, raw_estimate, diagnostic, rowset, selection, column_names,
       describe, rows_used_dropped, chi2_quantile, chi2_tail, f_quantile, f_tail,
       beta_quantile, beta_tail, hotelling_limit, library_version,
       method_name, method_from_name, structure_name, structure_from_name,
       missing_name, missing_from_name

const libellipsa = get(ENV, "ELLIPSA_LIB", "libellipsa")

# ---- constants of ellipsa.h ------------------------------------------------------------
const METHODS = Dict(:classical => 1, :ledoit_wolf => 2, :oas => 3, :mcd => 4,
                     :detmcd => 5, :mrcd => 6, :mixture => 7)
const METHOD_SYMBOLS = Dict(v => k for (k, v) in METHODS)
const DIVISORS = Dict(:n => 1, :n_minus_1 => 2)
const MISSING_POLICIES = Dict(:drop_rows => 1, :refuse => 2, :em => 3)
const STRUCTURES = Dict(:full => 1, :diagonal => 2, :tied => 3, :spherical => 4, :all => 5)
const STRUCTURE_SYMBOLS = Dict(v => k for (k, v) in STRUCTURES)
const ROWSETS = Dict(:h_subset => 1, :outliers => 2, :dropped => 3)
const PHASES = Dict(:one => 1, :two => 2)
const KIND_GAUSSIAN = 1
const KIND_MIXTURE = 2

# ---- C structs, laid out as in ellipsa.h --------------------------------------------------
struct CMatrix
    data::Ptr{Cdouble}
    rows::Int64
    cols::Int64
    row_stride::Int64
    col_stride::Int64
end

# struct_size first, then ten pointers: 88 bytes on 64-bit, as sizeof(ellipsa_scores).
struct CScores
    struct_size::Int64
    squared_distance::Ptr{Cdouble}
    p_value::Ptr{Cdouble}
    flag::Ptr{Int32}
    observed::Ptr{Int32}
    contribution::Ptr{Cdouble}
    conditional_drop::Ptr{Cdouble}
    component::Ptr{Int32}
    membership::Ptr{Cdouble}
    log_density::Ptr{Cdouble}
    low_density::Ptr{Int32}
end

struct CCandidate
    struct_size::Int64
    components::Int32
    structure::Int32
    log_likelihood::Cdouble
    parameters::Int64
    bic::Cdouble
    icl::Cdouble
    converged::Int32
    chosen::Int32
end

# ---- errors ------------------------------------------------------------------------------
"""A failed ellipsa call: the status code, its C name and ellipsa_last_error()'s text."""
struct EllipsaError <: Exception
    status::Int32
    status_name::String
    message::String
end
Base.showerror(io::IO, e::EllipsaError) = print(io, e.status_name, ": ", e.message)

status_name(status::Integer) =
    unsafe_string(ccall((:ellipsa_status_string, libellipsa), Cstring, (Int32,), status))

# Must run right after the failing call, on the same thread: the message is
# thread-local and the next ellipsa call may replace it, so it is copied first.
function check(status::Int32)
    status == 0 && return nothing
    msg = unsafe_string(ccall((:ellipsa_last_error, libellipsa), Cstring, ()))
    throw(EllipsaError(status, status_name(status), msg))
end

library_version() = unsafe_string(ccall((:ellipsa_version, libellipsa), Cstring, ()))

# ---- names of methods, covariance structures, missing-value policies ------------------------
# The library's own names (model file, batch tool, every binding): "classical", "ledoit-wolf", ...;
# "full", "diagonal", "tied", "spherical", "all"; "drop", "refuse", "em". A code the library does
# not know is named "unknown"; an unknown name throws EllipsaError (ELLIPSA_ERR_ARGUMENT) whose
# message lists the names. Codes are the ELLIPSA_METHOD_, _STRUCTURE_ and _MISSING_ values.
"""The library's name of a method code (ELLIPSA_METHOD_*)."""
method_name(code::Integer) = unsafe_string(ccall((:ellipsa_method_name, libellipsa), Cstring, (Int32,), code))

"""The method code (ELLIPSA_METHOD_*) of a name as `method_name` writes it."""
function method_from_name(name::AbstractString)
    out = Ref{Int32}(0)
    check(ccall((:ellipsa_method_from_name, libellipsa), Int32, (Ref{Int32}, Cstring), out, name))
    Int(out[])
end

"""The library's name of a covariance structure code (ELLIPSA_STRUCTURE_*)."""
structure_name(code::Integer) = unsafe_string(ccall((:ellipsa_structure_name, libellipsa), Cstring, (Int32,), code))

"""The covariance structure code (ELLIPSA_STRUCTURE_*) of a name as `structure_name` writes it."""
function structure_from_name(name::AbstractString)
    out = Ref{Int32}(0)
    check(ccall((:ellipsa_structure_from_name, libellipsa), Int32, (Ref{Int32}, Cstring), out, name))
    Int(out[])
end

"""The library's name of a missing-value policy code (ELLIPSA_MISSING_*)."""
missing_name(code::Integer) = unsafe_string(ccall((:ellipsa_missing_name, libellipsa), Cstring, (Int32,), code))

"""The missing-value policy code (ELLIPSA_MISSING_*) of a name as `missing_name` writes it."""
function missing_from_name(name::AbstractString)
    out = Ref{Int32}(0)
    check(ccall((:ellipsa_missing_from_name, libellipsa), Int32, (Ref{Int32}, Cstring), out, name))
    Int(out[])
end

# ---- distributions --------------------------------------------------------------------------
# One literal ccall each: tests/bindings/check_julia_ccalls.py checks every ccall against ellipsa.h.
function chi2_quantile(probability, df)
    out = Ref{Cdouble}(NaN)
    check(ccall((:ellipsa_chi2_quantile, libellipsa), Int32, (Ref{Cdouble}, Cdouble, Cdouble), out, probability, df))
    out[]
end

function chi2_tail(x, df)
    out = Ref{Cdouble}(NaN)
    check(ccall((:ellipsa_chi2_tail, libellipsa), Int32, (Ref{Cdouble}, Cdouble, Cdouble), out, x, df))
    out[]
end

function f_quantile(probability, df1, df2)
    out = Ref{Cdouble}(NaN)
    check(ccall((:ellipsa_f_quantile, libellipsa), Int32, (Ref{Cdouble}, Cdouble, Cdouble, Cdouble),
                out, probability, df1, df2))
    out[]
end

function f_tail(x, df1, df2)
    out = Ref{Cdouble}(NaN)
    check(ccall((:ellipsa_f_tail, libellipsa), Int32, (Ref{Cdouble}, Cdouble, Cdouble, Cdouble), out, x, df1, df2))
    out[]
end

function beta_quantile(probability, a, b)
    out = Ref{Cdouble}(NaN)
    check(ccall((:ellipsa_beta_quantile, libellipsa), Int32, (Ref{Cdouble}, Cdouble, Cdouble, Cdouble),
                out, probability, a, b))
    out[]
end

function beta_tail(x, a, b)
    out = Ref{Cdouble}(NaN)
    check(ccall((:ellipsa_beta_tail, libellipsa), Int32, (Ref{Cdouble}, Cdouble, Cdouble, Cdouble), out, x, a, b))
    out[]
end

"""Hotelling T^2 upper control limit for individual observations (Tracy, Young and Mason 1992)."""
function hotelling_limit(phase::Symbol, m::Integer, p::Integer, alpha::Real)
    out = Ref{Cdouble}(NaN)
    check(ccall((:ellipsa_hotelling_limit, libellipsa), Int32,
                (Ref{Cdouble}, Int32, Int64, Int64, Cdouble), out, PHASES[phase], m, p, alpha))
    out[]
end

# ---- fit settings ------------------------------------------------------------------------------
"""How to fit; `nothing` keeps the library default (see ellipsa.h). `progress(stage, fraction)`
returns true to continue, false to cancel."""
Base.@kwdef mutable struct FitSettings
    method::Symbol = :classical
    divisor::Union{Nothing,Symbol} = nothing
    missing_policy::Union{Nothing,Symbol} = nothing
    column_names::Union{Nothing,Vector{String}} = nothing
    alpha::Union{Nothing,Float64} = nothing
    seed::Union{Nothing,UInt64} = nothing
    components::Union{Nothing,Tuple{Int,Int}} = nothing
    structure::Union{Nothing,Symbol} = nothing
    restarts::Union{Nothing,Int} = nothing
    max_iterations::Union{Nothing,Int} = nothing
    tolerance::Union{Nothing,Float64} = nothing
    regularisation::Union{Nothing,Float64} = nothing
    progress::Union{Nothing,Function} = nothing
end

mutable struct ProgressBox
    f::Function
    err::Any
end

function progress_trampoline(stage::Cstring, fraction::Cdouble, user::Ptr{Cvoid})::Cint
    box = unsafe_pointer_to_objref(user)::ProgressBox
    try
        return box.f(unsafe_string(stage), fraction) ? Cint(0) : Cint(1)
    catch e
        box.err = e          # no Julia exception may unwind through C frames
        return Cint(1)
    end
end

# Each setter is its own ccall: ccall needs its argument types written out literally.
function with_options(f, s::FitSettings)
    h = Ref{Ptr{Cvoid}}(C_NULL)
    check(ccall((:ellipsa_fit_options_create, libellipsa), Int32, (Ref{Ptr{Cvoid}}, Int32),
                h, METHODS[s.method]))
    opt = h[]
    try
        if s.divisor !== nothing
            check(ccall((:ellipsa_fit_options_set_divisor, libellipsa), Int32, (Ptr{Cvoid}, Int32),
                        opt, DIVISORS[s.divisor]))
        end
        if s.missing_policy !== nothing
            check(ccall((:ellipsa_fit_options_set_missing, libellipsa), Int32, (Ptr{Cvoid}, Int32),
                        opt, MISSING_POLICIES[s.missing_policy]))
        end
        if s.alpha !== nothing
            check(ccall((:ellipsa_fit_options_set_alpha, libellipsa), Int32, (Ptr{Cvoid}, Cdouble),
                        opt, s.alpha))
        end
        if s.seed !== nothing
            check(ccall((:ellipsa_fit_options_set_seed, libellipsa), Int32, (Ptr{Cvoid}, UInt64),
                        opt, s.seed))
        end
        if s.components !== nothing
            check(ccall((:ellipsa_fit_options_set_components, libellipsa), Int32, (Ptr{Cvoid}, Int32, Int32),
                        opt, s.components[1], s.components[2]))
        end
        if s.structure !== nothing
            check(ccall((:ellipsa_fit_options_set_structure, libellipsa), Int32, (Ptr{Cvoid}, Int32),
                        opt, STRUCTURES[s.structure]))
        end
        if s.restarts !== nothing
            check(ccall((:ellipsa_fit_options_set_restarts, libellipsa), Int32, (Ptr{Cvoid}, Int32),
                        opt, s.restarts))
        end
        if s.max_iterations !== nothing || s.tolerance !== nothing
            check(ccall((:ellipsa_fit_options_set_iterations, libellipsa), Int32, (Ptr{Cvoid}, Int32, Cdouble),
                        opt, something(s.max_iterations, 500), something(s.tolerance, 1e-6)))
        end
        if s.regularisation !== nothing
            check(ccall((:ellipsa_fit_options_set_regularisation, libellipsa), Int32, (Ptr{Cvoid}, Cdouble),
                        opt, s.regularisation))
        end
        if s.column_names !== nothing
            names = s.column_names   # Julia Strings are NUL-terminated; keep them rooted during the call
            GC.@preserve names begin
                ptrs = [Base.unsafe_convert(Cstring, Base.cconvert(Cstring, n)) for n in names]
                check(ccall((:ellipsa_fit_options_set_column_names, libellipsa), Int32,
                            (Ptr{Cvoid}, Ptr{Cstring}, Int64), opt, ptrs, length(names)))
            end
        end
        return f(opt)
    finally
        ccall((:ellipsa_fit_options_destroy, libellipsa), Cvoid, (Ptr{Cvoid},), opt)
    end
end

# ---- matrices: views without copies where Julia's layout allows ------------------------------
# Julia arrays are column-major; strides(X) are in elements, as ellipsa_matrix wants.
as_strided(X::StridedMatrix{Float64}) = all(>=(0), strides(X)) ? X : Matrix{Float64}(X)
as_strided(X::AbstractMatrix) = Matrix{Float64}(X)

cmatrix(X::StridedMatrix{Float64}) =
    CMatrix(pointer(X), size(X, 1), size(X, 2), stride(X, 1), stride(X, 2))

# ---- model ------------------------------------------------------------------------------------
"""A fitted model; freed by its finalizer or explicitly by `close(model)`."""
mutable struct Model
    ptr::Ptr{Cvoid}
    function Model(ptr::Ptr{Cvoid})
        m = new(ptr)
        finalizer(close, m)
        return m
    end
end

function Base.close(m::Model)
    if m.ptr != C_NULL
        ccall((:ellipsa_model_destroy, libellipsa), Cvoid, (Ptr{Cvoid},), m.ptr)
        m.ptr = C_NULL
    end
    nothing
end

function handle(m::Model)
    m.ptr == C_NULL && throw(ArgumentError("the model was closed"))
    m.ptr
end

"""Fit rows (observations) x columns (variables). Column-major matrices and strided views are read in place."""
function fit(X::AbstractMatrix, s::FitSettings)
    A = as_strided(X)
    with_options(s) do opt
        box = nothing
        if s.progress !== nothing
            box = ProgressBox(s.progress, nothing)
            cb = @cfunction(progress_trampoline, Cint, (Cstring, Cdouble, Ptr{Cvoid}))
            check(ccall((:ellipsa_fit_options_set_progress, libellipsa), Int32, (Ptr{Cvoid}, Ptr{Cvoid}, Ptr{Cvoid}),
                        opt, cb, pointer_from_objref(box)))
        end
        out = Ref{Ptr{Cvoid}}(C_NULL)
        status = GC.@preserve A box begin
            cview = Ref(cmatrix(A))
            ccall((:ellipsa_model_fit, libellipsa), Int32, (Ref{Ptr{Cvoid}}, Ref{CMatrix}, Ptr{Cvoid}),
                  out, cview, opt)
        end
        if box !== nothing && box.err !== nothing
            out[] == C_NULL || ccall((:ellipsa_model_destroy, libellipsa), Cvoid, (Ptr{Cvoid},), out[])
            throw(box.err)
        end
        check(status)
        Model(out[])
    end
end

fit(X::AbstractMatrix; kwargs...) = fit(X, FitSettings(; kwargs...))

"""The model as JSON text; save -> load -> save is byte-identical."""
function save(m::Model)
    text = Ref{Ptr{UInt8}}(C_NULL)
    len = Ref{Int64}(0)
    check(ccall((:ellipsa_model_save, libellipsa), Int32, (Ref{Ptr{UInt8}}, Ref{Int64}, Ptr{Cvoid}),
                text, len, handle(m)))
    try
        return unsafe_string(text[], len[])
    finally
        ccall((:ellipsa_text_free, libellipsa), Cvoid, (Ptr{UInt8},), text[])
    end
end

"""Read a model from JSON written by any binding (validated by the library)."""
function load(json::AbstractString)
    bytes = Vector{UInt8}(codeunits(String(json)))
    out = Ref{Ptr{Cvoid}}(C_NULL)
    check(ccall((:ellipsa_model_load, libellipsa), Int32, (Ref{Ptr{Cvoid}}, Ptr{UInt8}, Int64),
                out, bytes, length(bytes)))
    Model(out[])
end

"""(kind = :gaussian | :mixture, method, dimension, components)"""
function describe(m::Model)
    kind = Ref{Int32}(0); method = Ref{Int32}(0); p = Ref{Int64}(0); k = Ref{Int32}(0)
    check(ccall((:ellipsa_model_describe, libellipsa), Int32,
                (Ref{Int32}, Ref{Int32}, Ref{Int64}, Ref{Int32}, Ptr{Cvoid}), kind, method, p, k, handle(m)))
    (kind = kind[] == KIND_MIXTURE ? :mixture : :gaussian, method = METHOD_SYMBOLS[Int(method[])],
     dimension = Int(p[]), components = Int(k[]))
end

function rows_used_dropped(m::Model)
    used = Ref{Int64}(0); dropped = Ref{Int64}(0)
    check(ccall((:ellipsa_model_rows, libellipsa), Int32, (Ref{Int64}, Ref{Int64}, Ptr{Cvoid}),
                used, dropped, handle(m)))
    (used = Int(used[]), dropped = Int(dropped[]))
end

function column_names(m::Model)
    map(0:describe(m).dimension-1) do j
        s = Ref{Cstring}(C_NULL)
        check(ccall((:ellipsa_model_column_name, libellipsa), Int32, (Ref{Cstring}, Ptr{Cvoid}, Int64),
                    s, handle(m), j))
        unsafe_string(s[])
    end
end

# The library writes p x p row-major; a Julia p x p buffer read as its transpose is that matrix.
"""Location, scatter and weight of component k (1-based, Julia style)."""
function component(m::Model, k::Integer = 1)
    p = describe(m).dimension
    loc = Vector{Float64}(undef, p); buf = Matrix{Float64}(undef, p, p); w = Ref{Cdouble}(NaN)
    check(ccall((:ellipsa_model_component, libellipsa), Int32,
                (Ptr{Cdouble}, Int64, Ptr{Cdouble}, Int64, Ref{Cdouble}, Ptr{Cvoid}, Int32),
                loc, p, buf, p * p, w, handle(m), k - 1))
    (location = loc, scatter = permutedims(buf), weight = w[])
end
location(m::Model) = component(m, 1).location
scatter(m::Model) = component(m, 1).scatter

"""MCD family: the raw (unreweighted, consistency-corrected) location and scatter."""
function raw_estimate(m::Model)
    p = describe(m).dimension
    loc = Vector{Float64}(undef, p); buf = Matrix{Float64}(undef, p, p)
    check(ccall((:ellipsa_model_raw_estimate, libellipsa), Int32,
                (Ptr{Cdouble}, Int64, Ptr{Cdouble}, Int64, Ptr{Cvoid}), loc, p, buf, p * p, handle(m)))
    (location = loc, scatter = permutedims(buf))
end

"""A named number describing the fit, e.g. "log_det", "h", "bic" (see ellipsa.h)."""
function diagnostic(m::Model, name::AbstractString)
    out = Ref{Cdouble}(NaN)
    check(ccall((:ellipsa_model_diagnostic, libellipsa), Int32, (Ref{Cdouble}, Ptr{Cvoid}, Cstring),
                out, handle(m), String(name)))
    out[]
end

"""Fitting-data rows of a set (:h_subset, :outliers, :dropped), returned 1-based."""
function rowset(m::Model, which::Symbol)
    count = Ref{Int64}(0)
    check(ccall((:ellipsa_model_row_set, libellipsa), Int32, (Ptr{Int64}, Int64, Ref{Int64}, Ptr{Cvoid}, Int32),
                C_NULL, 0, count, handle(m), ROWSETS[which]))
    rows = Vector{Int64}(undef, count[])
    check(ccall((:ellipsa_model_row_set, libellipsa), Int32, (Ptr{Int64}, Int64, Ref{Int64}, Ptr{Cvoid}, Int32),
                rows, length(rows), count, handle(m), ROWSETS[which]))
    rows .+ 1
end

"""Mixtures: the model-choice table (a vector of named tuples)."""
function selection(m::Model)
    count = Ref{Int64}(0)
    check(ccall((:ellipsa_model_selection, libellipsa), Int32, (Ptr{CCandidate}, Int64, Ref{Int64}, Ptr{Cvoid}),
                C_NULL, 0, count, handle(m)))
    blank = CCandidate(sizeof(CCandidate), 0, 0, NaN, 0, NaN, NaN, 0, 0)
    table = fill(blank, count[])
    check(ccall((:ellipsa_model_selection, libellipsa), Int32, (Ptr{CCandidate}, Int64, Ref{Int64}, Ptr{Cvoid}),
                table, length(table), count, handle(m)))
    [(components = Int(c.components), structure = STRUCTURE_SYMBOLS[Int(c.structure)], log_likelihood = c.log_likelihood,
      parameters = Int(c.parameters), bic = c.bic, icl = c.icl, converged = c.converged != 0,
      chosen = c.chosen != 0) for c in table]
end

"""Score rows (the model's columns in its order) at a flagging level in (0, 1).
Flags are statistical evidence at that level, not verdicts. Per-variable results are n x p;
components are 1-based."""
function score(m::Model, X::AbstractMatrix; level::Real = 0.975)
    A = as_strided(X)
    d = describe(m)
    n, p, K = size(A, 1), d.dimension, d.components
    d2 = Vector{Float64}(undef, n); pv = Vector{Float64}(undef, n)
    flag = Vector{Int32}(undef, n); obs = Vector{Int32}(undef, n)
    contrib = Matrix{Float64}(undef, p, n); drop = Matrix{Float64}(undef, p, n)  # row-major n x p
    comp = Vector{Int32}(undef, n); memb = Matrix{Float64}(undef, K, n)          # row-major n x K
    logd = Vector{Float64}(undef, n); low = Vector{Int32}(undef, n)
    status = GC.@preserve A d2 pv flag obs contrib drop comp memb logd low begin
        out = Ref(CScores(sizeof(CScores), pointer(d2), pointer(pv), pointer(flag), pointer(obs),
                          pointer(contrib), pointer(drop), pointer(comp), pointer(memb),
                          pointer(logd), pointer(low)))
        cview = Ref(cmatrix(A))
        ccall((:ellipsa_model_score, libellipsa), Int32, (Ref{CScores}, Ptr{Cvoid}, Ref{CMatrix}, Cdouble),
              out, handle(m), cview, level)
    end
    check(status)
    (squared_distance = d2, p_value = pv, flag = flag, observed = obs,
     contribution = permutedims(contrib), conditional_drop = permutedims(drop),
     component = comp .+ Int32(1), membership = permutedims(memb), log_density = logd,
     low_density = low)
end

end # module
