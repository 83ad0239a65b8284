// C# binding of the ellipsa C interface (capi/include/ellipsa.h), by P/Invoke.
//
// Thin on purpose: every number comes from libellipsa; this file only moves
// arrays across the boundary, owns handles through SafeHandle and turns status
// codes into EllipsaException. The native library is found by the runtime's
// ordinary search: DllImport("ellipsa") makes Mono dlopen "libellipsa.so", so
// put its directory on LD_LIBRARY_PATH (or map the name in a .dll.config file;
// see README.md).
//
// Matrices: a C# double[,] is row-major and contiguous, so it is pinned and
// passed as a view with row_stride = cols, col_stride = 1 (no copy). Jagged
// double[][] input is copied into a double[,] first.
using System;
using System.Runtime.ExceptionServices;
using System.Runtime.InteropServices;
using System.Text;

namespace Ellipsa
{
    /// <summary>Status codes of the C interface (ELLIPSA_OK, ELLIPSA_ERR_*, ELLIPSA_NUM_*).</summary>
    public enum Status
    {
        Ok = 0, ErrNull = 1, ErrArgument = 2, ErrShape = 3, ErrState = 4,
        ErrData = 10, ErrFormat = 11, ErrMemory = 12, ErrCancelled = 13, ErrInternal = 14,
        NumSingular = 20, NumNotConverged = 21, NumExactFit = 22,
    }

    /// <summary>Estimation methods (ELLIPSA_METHOD_*).</summary>
    public enum Method { Classical = 1, LedoitWolf = 2, Oas = 3, Mcd = 4, DetMcd = 5, Mrcd = 6, Mixture = 7 }

    /// <summary>Divisor of a classical covariance (ELLIPSA_DIVISOR_*).</summary>
    public enum Divisor { N = 1, NMinus1 = 2 }

    /// <summary>What fitting does with rows containing NaN (ELLIPSA_MISSING_*).</summary>
    public enum MissingPolicy { DropRows = 1, Refuse = 2, Em = 3 }

    /// <summary>Covariance structure of mixture components (ELLIPSA_STRUCTURE_*).</summary>
    public enum Structure { Full = 1, Diagonal = 2, Tied = 3, Spherical = 4, All = 5 }

    /// <summary>Kind of a fitted model (ELLIPSA_KIND_*).</summary>
    public enum ModelKind { Gaussian = 1, Mixture = 2 }

    /// <summary>Row sets recorded by a fit (ELLIPSA_ROWS_*).</summary>
    public enum RowSet { HSubset = 1, Outliers = 2, Dropped = 3 }

    /// <summary>Phase of a Hotelling T^2 control limit (ELLIPSA_PHASE_*).</summary>
    public enum Phase { One = 1, Two = 2 }

    /// <summary>Which per-row results Model.Score fills; unrequested arrays stay null.</summary>
    [Flags]
    public enum ScoreOutputs
    {
        SquaredDistance = 1, PValue = 2, Flag = 4, Observed = 8, Contribution = 16,
        ConditionalDrop = 32, Component = 64, Membership = 128, LogDensity = 256, LowDensity = 512,
        All = 1023,
    }

    /// <summary>A failed ellipsa call: its status, the status name and the library's message.</summary>
    public sealed class EllipsaException : Exception
    {
        public Status Status { get; private set; }
        /// <summary>The C name of the status, e.g. "ELLIPSA_ERR_DATA".</summary>
        public string StatusName { get; private set; }
        /// <summary>The text of ellipsa_last_error(), read right after the failing call.</summary>
        public string NativeMessage { get; private set; }

        internal EllipsaException(Status status, string statusName, string nativeMessage)
            : base(statusName + ": " + nativeMessage)
        {
            Status = status;
            StatusName = statusName;
            NativeMessage = nativeMessage;
        }
    }

    /// <summary>Owns an ellipsa_model*; releasing it calls ellipsa_model_destroy.</summary>
    public sealed class ModelHandle : SafeHandle
    {
        private ModelHandle() : base(IntPtr.Zero, true) { }
        public override bool IsInvalid { get { return handle == IntPtr.Zero; } }
        protected override bool ReleaseHandle() { Native.ellipsa_model_destroy(handle); return true; }
    }

    /// <summary>Owns an ellipsa_fit_options*; releasing it calls ellipsa_fit_options_destroy.</summary>
    public sealed class FitOptionsHandle : SafeHandle
    {
        private FitOptionsHandle() : base(IntPtr.Zero, true) { }
        public override bool IsInvalid { get { return handle == IntPtr.Zero; } }
        protected override bool ReleaseHandle() { Native.ellipsa_fit_options_destroy(handle); return true; }

        /// <summary>Creates a native options handle holding every setting of <paramref name="s"/>
        /// except the progress callback (Model.Fit installs that for the duration of the fit).</summary>
        public static FitOptionsHandle Create(FitSettings s)
        {
            if (s == null) throw new ArgumentNullException("s");
            FitOptionsHandle h;
            Native.Check(Native.ellipsa_fit_options_create(out h, (int)s.Method));
            try
            {
                if (s.Divisor.HasValue) Native.Check(Native.ellipsa_fit_options_set_divisor(h, (int)s.Divisor.Value));
                if (s.Missing.HasValue) Native.Check(Native.ellipsa_fit_options_set_missing(h, (int)s.Missing.Value));
                if (s.Alpha.HasValue) Native.Check(Native.ellipsa_fit_options_set_alpha(h, s.Alpha.Value));
                if (s.Seed.HasValue) Native.Check(Native.ellipsa_fit_options_set_seed(h, s.Seed.Value));
                if (s.ComponentsMin.HasValue || s.ComponentsMax.HasValue)
                {
                    int kmin = s.ComponentsMin ?? 1;
                    Native.Check(Native.ellipsa_fit_options_set_components(h, kmin, s.ComponentsMax ?? kmin));
                }
                if (s.Structure.HasValue) Native.Check(Native.ellipsa_fit_options_set_structure(h, (int)s.Structure.Value));
                if (s.Restarts.HasValue) Native.Check(Native.ellipsa_fit_options_set_restarts(h, s.Restarts.Value));
                if (s.MaxIterations.HasValue || s.Tolerance.HasValue)
                    Native.Check(Native.ellipsa_fit_options_set_iterations(h, s.MaxIterations ?? 500, s.Tolerance ?? 1e-6));
                if (s.Regularisation.HasValue) Native.Check(Native.ellipsa_fit_options_set_regularisation(h, s.Regularisation.Value));
                if (s.ColumnNames != null) SetColumnNames(h, s.ColumnNames);
            }
            catch { h.Dispose(); throw; }
            return h;
        }

        private static void SetColumnNames(FitOptionsHandle h, string[] names)
        {
            var ptrs = new IntPtr[names.Length];
            try
            {
                for (int i = 0; i < names.Length; ++i)
                {
                    if (names[i] == null) throw new ArgumentNullException("ColumnNames[" + i + "]");
                    byte[] z = Native.Utf8z(names[i]);
                    ptrs[i] = Marshal.AllocHGlobal(z.Length);
                    Marshal.Copy(z, 0, ptrs[i], z.Length);
                }
                Native.Check(Native.ellipsa_fit_options_set_column_names(h, ptrs, names.Length));
            }
            finally
            {
                foreach (IntPtr p in ptrs) if (p != IntPtr.Zero) Marshal.FreeHGlobal(p);
            }
        }
    }

    /// <summary>How to fit. Unset (null) settings keep the library's defaults (see ellipsa.h).</summary>
    public sealed class FitSettings
    {
        public Method Method = Method.Classical;
        public Divisor? Divisor;
        public MissingPolicy? Missing;
        public string[] ColumnNames;
        public double? Alpha;
        public ulong? Seed;
        public int? ComponentsMin, ComponentsMax;
        public Structure? Structure;
        public int? Restarts;
        public int? MaxIterations;
        public double? Tolerance;
        public double? Regularisation;
        /// <summary>Called during long fits with (stage, fraction in [0,1]); return false to cancel
        /// (the fit then throws EllipsaException with Status.ErrCancelled). An exception thrown here
        /// cancels the fit and is rethrown by Model.Fit.</summary>
        public Func<string, double, bool> Progress;

        public FitSettings() { }
        public FitSettings(Method method) { Method = method; }
    }

    /// <summary>Per-row results of Model.Score; arrays not requested are null.
    /// Flags are statistical evidence at the chosen level, not verdicts.</summary>
    public sealed class Scores
    {
        public double[] SquaredDistance;  // [n]
        public double[] PValue;           // [n]
        public int[] Flag;                // [n] 1 flagged, 0 not, -1 not scorable
        public int[] Observed;            // [n] observed coordinates (degrees of freedom)
        public double[,] Contribution;    // [n, p], rows sum to SquaredDistance
        public double[,] ConditionalDrop; // [n, p]
        public int[] Component;           // [n]
        public double[,] Membership;      // [n, K]
        public double[] LogDensity;       // [n]
        public int[] LowDensity;          // [n]
    }

    /// <summary>One row of a mixture model-choice table (ellipsa_candidate).</summary>
    public struct Candidate
    {
        public int Components; public Structure Structure; public double LogLikelihood;
        public long Parameters; public double Bic; public double Icl; public bool Converged; public bool Chosen;
    }

    /// <summary>A fitted model (location and scatter, or a Gaussian mixture). Read-only and
    /// shareable between threads once fitted or loaded; Dispose releases the native model.</summary>
    public sealed class Model : IDisposable
    {
        private readonly ModelHandle handle;
        private Model(ModelHandle h) { handle = h; }

        /// <summary>The native handle (for callers who need the raw C interface).</summary>
        public ModelHandle Handle { get { return handle; } }

        public void Dispose() { handle.Dispose(); }

        // ---- fitting --------------------------------------------------------------
        /// <summary>Fits rows (observations) x columns (variables); the array is pinned, not copied.</summary>
        public static Model Fit(double[,] data, FitSettings settings)
        {
            if (data == null) throw new ArgumentNullException("data");
            return FitPinned(data, data.GetLength(0), data.GetLength(1), data.GetLength(1), 1, settings);
        }

        /// <summary>Fits a jagged array (copied into a rectangular one; rows must have equal length).</summary>
        public static Model Fit(double[][] data, FitSettings settings) { return Fit(Rectangular(data), settings); }

        /// <summary>Fits a strided view of a flat buffer: element (i, j) is
        /// data[i*rowStride + j*colStride] (column-major: rowStride = 1, colStride = rows).</summary>
        public static Model Fit(double[] data, long rows, long cols, long rowStride, long colStride, FitSettings settings)
        {
            if (data == null) throw new ArgumentNullException("data");
            CheckViewBounds(data.Length, rows, cols, rowStride, colStride);
            return FitPinned(data, rows, cols, rowStride, colStride, settings);
        }

        private static Model FitPinned(Array data, long rows, long cols, long rs, long cs, FitSettings settings)
        {
            if (settings == null) throw new ArgumentNullException("settings");
            using (FitOptionsHandle options = FitOptionsHandle.Create(settings))
            {
                Exception callbackError = null;
                Native.ProgressFn trampoline = null;
                if (settings.Progress != null)
                {
                    Func<string, double, bool> user = settings.Progress;
                    // Managed exceptions must not unwind through native frames: catch, cancel, rethrow later.
                    trampoline = (stage, fraction, u) =>
                    {
                        try { return user(Native.Utf8(stage), fraction) ? 0 : 1; }
                        catch (Exception e) { callbackError = e; return 1; }
                    };
                    Native.Check(Native.ellipsa_fit_options_set_progress(options, trampoline, IntPtr.Zero));
                }
                GCHandle pin = GCHandle.Alloc(data, GCHandleType.Pinned);
                try
                {
                    var view = new Native.Matrix { data = pin.AddrOfPinnedObject(), rows = rows, cols = cols, row_stride = rs, col_stride = cs };
                    ModelHandle model;
                    int status = Native.ellipsa_model_fit(out model, ref view, options);
                    if (callbackError != null) { model.Dispose(); ExceptionDispatchInfo.Capture(callbackError).Throw(); }
                    Native.Check(status);
                    return new Model(model);
                }
                finally
                {
                    pin.Free();
                    GC.KeepAlive(trampoline); // the native side held a pointer to it during the fit
                }
            }
        }

        // ---- files ----------------------------------------------------------------
        /// <summary>The model as JSON text (docs/model-format.md); save -> load -> save is byte-identical.</summary>
        public string Save()
        {
            IntPtr text; long length;
            Native.Check(Native.ellipsa_model_save(out text, out length, handle));
            try
            {
                var bytes = new byte[checked((int)length)];
                Marshal.Copy(text, bytes, 0, bytes.Length);
                return Encoding.UTF8.GetString(bytes);
            }
            finally { Native.ellipsa_text_free(text); }
        }

        /// <summary>Reads a model from JSON written by any binding; everything is validated by the library.</summary>
        public static Model Load(string json)
        {
            if (json == null) throw new ArgumentNullException("json");
            byte[] bytes = Encoding.UTF8.GetBytes(json);
            ModelHandle h;
            Native.Check(Native.ellipsa_model_load(out h, bytes, bytes.LongLength));
            return new Model(h);
        }

        // ---- queries ----------------------------------------------------------------
        public ModelKind Kind { get { int k; Method m; long p; int c; Describe(out k, out m, out p, out c); return (ModelKind)k; } }
        public Method Method { get { int k; Method m; long p; int c; Describe(out k, out m, out p, out c); return m; } }
        public long Dimension { get { int k; Method m; long p; int c; Describe(out k, out m, out p, out c); return p; } }
        public int Components { get { int k; Method m; long p; int c; Describe(out k, out m, out p, out c); return c; } }

        private void Describe(out int kind, out Method method, out long p, out int components)
        {
            int m;
            Native.Check(Native.ellipsa_model_describe(out kind, out m, out p, out components, handle));
            method = (Method)m;
        }

        /// <summary>Rows of the fitting data used by the fit.</summary>
        public long RowsUsed { get { long u, d; Native.Check(Native.ellipsa_model_rows(out u, out d, handle)); return u; } }
        /// <summary>Rows of the fitting data dropped for missing values.</summary>
        public long RowsDropped { get { long u, d; Native.Check(Native.ellipsa_model_rows(out u, out d, handle)); return d; } }

        public string[] ColumnNames
        {
            get
            {
                long p = Dimension;
                var names = new string[p];
                for (long j = 0; j < p; ++j)
                {
                    IntPtr s;
                    Native.Check(Native.ellipsa_model_column_name(out s, handle, j));
                    names[j] = Native.Utf8(s);
                }
                return names;
            }
        }

        /// <summary>Location of a Gaussian model (component 0 of a mixture).</summary>
        public double[] Location { get { double[] l; double[,] s; double w; Component(0, out l, out s, out w); return l; } }
        /// <summary>Scatter (p x p) of a Gaussian model (component 0 of a mixture).</summary>
        public double[,] Scatter { get { double[] l; double[,] s; double w; Component(0, out l, out s, out w); return s; } }

        /// <summary>Location, scatter and mixing weight of component k (0-based).</summary>
        public void Component(int k, out double[] location, out double[,] scatter, out double weight)
        {
            long p = Dimension;
            location = new double[p];
            var flat = new double[p * p];
            Native.Check(Native.ellipsa_model_component(location, p, flat, p * p, out weight, handle, k));
            scatter = Square(flat, p);
        }

        /// <summary>MCD family: the raw (unreweighted, consistency-corrected) estimate.</summary>
        public void RawEstimate(out double[] location, out double[,] scatter)
        {
            long p = Dimension;
            location = new double[p];
            var flat = new double[p * p];
            Native.Check(Native.ellipsa_model_raw_estimate(location, p, flat, p * p, handle));
            scatter = Square(flat, p);
        }

        /// <summary>A named number describing the fit, e.g. "log_det", "h", "bic" (see ellipsa.h).</summary>
        public double Diagnostic(string name)
        {
            if (name == null) throw new ArgumentNullException("name");
            double v;
            Native.Check(Native.ellipsa_model_diagnostic(out v, handle, Native.Utf8z(name)));
            return v;
        }

        /// <summary>A set of fitting-data rows (0-based, ascending).</summary>
        public long[] Rows(RowSet which)
        {
            long count;
            Native.Check(Native.ellipsa_model_row_set(null, 0, out count, handle, (int)which));
            var rows = new long[count];
            Native.Check(Native.ellipsa_model_row_set(rows, count, out count, handle, (int)which));
            return rows;
        }

        /// <summary>Mixtures: the model-choice table, one entry per candidate tried.</summary>
        public Candidate[] Selection()
        {
            long count;
            Native.Check(Native.ellipsa_model_selection(null, 0, out count, handle));
            var raw = new Native.CandidateStruct[count];
            for (long i = 0; i < count; ++i) raw[i].struct_size = Marshal.SizeOf(typeof(Native.CandidateStruct));
            Native.Check(Native.ellipsa_model_selection(raw, count, out count, handle));
            var result = new Candidate[count];
            for (long i = 0; i < count; ++i)
                result[i] = new Candidate
                {
                    Components = raw[i].components, Structure = (Structure)raw[i].structure,
                    LogLikelihood = raw[i].log_likelihood, Parameters = raw[i].parameters, Bic = raw[i].bic,
                    Icl = raw[i].icl, Converged = raw[i].converged != 0, Chosen = raw[i].chosen != 0,
                };
            return result;
        }

        // ---- scoring ------------------------------------------------------------------
        /// <summary>Scores rows (the model's columns, in its order) at a flagging level in (0, 1).</summary>
        public Scores Score(double[,] data, double level = 0.975, ScoreOutputs outputs = ScoreOutputs.All)
        {
            if (data == null) throw new ArgumentNullException("data");
            return ScorePinned(data, data.GetLength(0), data.GetLength(1), data.GetLength(1), 1, level, outputs);
        }

        public Scores Score(double[][] data, double level = 0.975, ScoreOutputs outputs = ScoreOutputs.All)
        {
            return Score(Rectangular(data), level, outputs);
        }

        /// <summary>Scores a strided view of a flat buffer (see the matching Fit overload).</summary>
        public Scores Score(double[] data, long rows, long cols, long rowStride, long colStride,
                            double level = 0.975, ScoreOutputs outputs = ScoreOutputs.All)
        {
            if (data == null) throw new ArgumentNullException("data");
            CheckViewBounds(data.Length, rows, cols, rowStride, colStride);
            return ScorePinned(data, rows, cols, rowStride, colStride, level, outputs);
        }

        private Scores ScorePinned(Array data, long n, long cols, long rs, long cs, double level, ScoreOutputs want)
        {
            long p = Dimension;
            int k = Components;
            var r = new Scores();
            if (Wants(want, ScoreOutputs.SquaredDistance)) r.SquaredDistance = new double[n];
            if (Wants(want, ScoreOutputs.PValue)) r.PValue = new double[n];
            if (Wants(want, ScoreOutputs.Flag)) r.Flag = new int[n];
            if (Wants(want, ScoreOutputs.Observed)) r.Observed = new int[n];
            if (Wants(want, ScoreOutputs.Contribution)) r.Contribution = new double[n, p];
            if (Wants(want, ScoreOutputs.ConditionalDrop)) r.ConditionalDrop = new double[n, p];
            if (Wants(want, ScoreOutputs.Component)) r.Component = new int[n];
            if (Wants(want, ScoreOutputs.Membership)) r.Membership = new double[n, k];
            if (Wants(want, ScoreOutputs.LogDensity)) r.LogDensity = new double[n];
            if (Wants(want, ScoreOutputs.LowDensity)) r.LowDensity = new int[n];

            Array[] buffers = { data, r.SquaredDistance, r.PValue, r.Flag, r.Observed, r.Contribution,
                                r.ConditionalDrop, r.Component, r.Membership, r.LogDensity, r.LowDensity };
            var pins = new GCHandle[buffers.Length];
            var ptr = new IntPtr[buffers.Length];
            try
            {
                for (int i = 0; i < buffers.Length; ++i)
                    if (buffers[i] != null)
                    {
                        pins[i] = GCHandle.Alloc(buffers[i], GCHandleType.Pinned);
                        ptr[i] = pins[i].AddrOfPinnedObject();
                    }
                var view = new Native.Matrix { data = ptr[0], rows = n, cols = cols, row_stride = rs, col_stride = cs };
                var s = new Native.ScoresStruct
                {
                    struct_size = Marshal.SizeOf(typeof(Native.ScoresStruct)),
                    squared_distance = ptr[1], p_value = ptr[2], flag = ptr[3], observed = ptr[4],
                    contribution = ptr[5], conditional_drop = ptr[6], component = ptr[7],
                    membership = ptr[8], log_density = ptr[9], low_density = ptr[10],
                };
                Native.Check(Native.ellipsa_model_score(ref s, handle, ref view, level));
            }
            finally
            {
                foreach (GCHandle g in pins) if (g.IsAllocated) g.Free();
            }
            return r;
        }

        // ---- helpers ------------------------------------------------------------------
        private static bool Wants(ScoreOutputs want, ScoreOutputs one) { return (want & one) != 0; }

        private static double[,] Square(double[] flat, long p)
        {
            var m = new double[p, p];
            Buffer.BlockCopy(flat, 0, m, 0, flat.Length * sizeof(double));
            return m;
        }

        private static double[,] Rectangular(double[][] data)
        {
            if (data == null) throw new ArgumentNullException("data");
            int n = data.Length, p = n == 0 ? 0 : (data[0] ?? new double[0]).Length;
            var m = new double[n, p];
            for (int i = 0; i < n; ++i)
            {
                if (data[i] == null) throw new ArgumentNullException("data[" + i + "]");
                if (data[i].Length != p) throw new ArgumentException("row " + i + " has " + data[i].Length + " values, row 0 has " + p);
                for (int j = 0; j < p; ++j) m[i, j] = data[i][j];
            }
            return m;
        }

        // The library trusts the view; the binding must not let it read outside the managed array.
        // Negative sizes or strides are left to the library, which refuses them (ELLIPSA_ERR_SHAPE).
        private static void CheckViewBounds(long length, long rows, long cols, long rs, long cs)
        {
            if (rows <= 0 || cols <= 0 || rs < 0 || cs < 0) return;
            long last;
            try { last = checked((rows - 1) * rs + (cols - 1) * cs); }
            catch (OverflowException) { throw new ArgumentException("the view's last element index overflows"); }
            if (last >= length)
                throw new ArgumentException("the view reaches element " + last + " of a buffer of " + length);
        }
    }

    /// <summary>Library version, status names, distributions and control limits.</summary>
    public static class Library
    {
        public static string Version { get { return Native.Utf8(Native.ellipsa_version()); } }
        public static int VersionNumber { get { return Native.ellipsa_version_number(); } }
        /// <summary>Version of the header this binding was written against (0.1.0).</summary>
        public const int BindingVersionNumber = 100;
        public static string StatusName(Status s) { return Native.Utf8(Native.ellipsa_status_string((int)s)); }
        public static string MethodName(Method m) { return Native.Utf8(Native.ellipsa_method_name((int)m)); }
        public static Method MethodFromName(string name)
        {
            int m; Native.Check(Native.ellipsa_method_from_name(out m, Native.Utf8z(name))); return (Method)m;
        }
        /// <summary>The library's name of a covariance structure ("full", "diagonal", "tied", "spherical", "all");
        /// "unknown" for a value the loaded library does not know.</summary>
        public static string StructureName(Structure s) { return Native.Utf8(Native.ellipsa_structure_name((int)s)); }
        /// <summary>The covariance structure of a name as StructureName writes it; an unknown name throws
        /// EllipsaException (ErrArgument) whose message lists the names.</summary>
        public static Structure StructureFromName(string name)
        {
            int s; Native.Check(Native.ellipsa_structure_from_name(out s, Native.Utf8z(name))); return (Structure)s;
        }
        /// <summary>The library's name of a missing-value policy ("drop", "refuse", "em");
        /// "unknown" for a value the loaded library does not know.</summary>
        public static string MissingName(MissingPolicy m) { return Native.Utf8(Native.ellipsa_missing_name((int)m)); }
        /// <summary>The missing-value policy of a name as MissingName writes it; an unknown name throws
        /// EllipsaException (ErrArgument) whose message lists the names.</summary>
        public static MissingPolicy MissingFromName(string name)
        {
            int m; Native.Check(Native.ellipsa_missing_from_name(out m, Native.Utf8z(name))); return (MissingPolicy)m;
        }

        public static double Chi2Quantile(double probability, double df) { double v; Native.Check(Native.ellipsa_chi2_quantile(out v, probability, df)); return v; }
        public static double Chi2Tail(double x, double df) { double v; Native.Check(Native.ellipsa_chi2_tail(out v, x, df)); return v; }
        public static double FQuantile(double probability, double df1, double df2) { double v; Native.Check(Native.ellipsa_f_quantile(out v, probability, df1, df2)); return v; }
        public static double FTail(double x, double df1, double df2) { double v; Native.Check(Native.ellipsa_f_tail(out v, x, df1, df2)); return v; }
        public static double BetaQuantile(double probability, double a, double b) { double v; Native.Check(Native.ellipsa_beta_quantile(out v, probability, a, b)); return v; }
        public static double BetaTail(double x, double a, double b) { double v; Native.Check(Native.ellipsa_beta_tail(out v, x, a, b)); return v; }
        /// <summary>Hotelling T^2 upper control limit for individual observations (Tracy, Young and Mason 1992).</summary>
        public static double HotellingLimit(Phase phase, long m, long p, double alpha) { double v; Native.Check(Native.ellipsa_hotelling_limit(out v, (int)phase, m, p, alpha)); return v; }
    }

    /// <summary>The P/Invoke declarations, one per function of ellipsa.h, and the status check.
    /// Library-owned strings (const char*) are taken as IntPtr and copied, never freed here.</summary>
    internal static class Native
    {
        private const string Lib = "ellipsa";

        [StructLayout(LayoutKind.Sequential)]
        internal struct Matrix
        {
            public IntPtr data;
            public long rows, cols, row_stride, col_stride;
        }

        // struct_size first, then ten pointers: 88 bytes on 64-bit, matching sizeof(ellipsa_scores).
        [StructLayout(LayoutKind.Sequential)]
        internal struct ScoresStruct
        {
            public long struct_size;
            public IntPtr squared_distance, p_value, flag, observed, contribution,
                          conditional_drop, component, membership, log_density, low_density;
        }

        [StructLayout(LayoutKind.Sequential)]
        internal struct CandidateStruct
        {
            public long struct_size;
            public int components, structure;
            public double log_likelihood;
            public long parameters;
            public double bic, icl;
            public int converged, chosen;
        }

        [UnmanagedFunctionPointer(CallingConvention.Cdecl)]
        internal delegate int ProgressFn(IntPtr stage, double fraction, IntPtr user);

        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern IntPtr ellipsa_version();
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_version_number();
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern IntPtr ellipsa_status_string(int status);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern IntPtr ellipsa_last_error();

        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_chi2_quantile(out double v, double probability, double df);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_chi2_tail(out double v, double x, double df);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_f_quantile(out double v, double probability, double df1, double df2);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_f_tail(out double v, double x, double df1, double df2);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_beta_quantile(out double v, double probability, double a, double b);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_beta_tail(out double v, double x, double a, double b);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_hotelling_limit(out double v, int phase, long m, long p, double alpha);

        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_fit_options_create(out FitOptionsHandle h, int method);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern void ellipsa_fit_options_destroy(IntPtr h);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_method_from_name(out int method, byte[] name);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern IntPtr ellipsa_method_name(int method);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_structure_from_name(out int structure, byte[] name);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern IntPtr ellipsa_structure_name(int structure);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_missing_from_name(out int policy, byte[] name);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern IntPtr ellipsa_missing_name(int policy);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_fit_options_set_divisor(FitOptionsHandle h, int divisor);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_fit_options_set_missing(FitOptionsHandle h, int policy);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_fit_options_set_column_names(FitOptionsHandle h, IntPtr[] names, long count);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_fit_options_set_alpha(FitOptionsHandle h, double alpha);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_fit_options_set_seed(FitOptionsHandle h, ulong seed);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_fit_options_set_components(FitOptionsHandle h, int kMin, int kMax);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_fit_options_set_structure(FitOptionsHandle h, int structure);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_fit_options_set_restarts(FitOptionsHandle h, int restarts);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_fit_options_set_iterations(FitOptionsHandle h, int maxIterations, double tolerance);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_fit_options_set_regularisation(FitOptionsHandle h, double relative);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_fit_options_set_progress(FitOptionsHandle h, ProgressFn callback, IntPtr user);

        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_model_fit(out ModelHandle model, ref Matrix data, FitOptionsHandle options);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern void ellipsa_model_destroy(IntPtr model);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_model_describe(out int kind, out int method, out long dimension, out int components, ModelHandle model);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_model_rows(out long used, out long dropped, ModelHandle model);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_model_column_name(out IntPtr name, ModelHandle model, long j);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_model_component([Out] double[] location, long locationCapacity, [Out] double[] scatter, long scatterCapacity, out double weight, ModelHandle model, int k);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_model_raw_estimate([Out] double[] location, long locationCapacity, [Out] double[] scatter, long scatterCapacity, ModelHandle model);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_model_diagnostic(out double v, ModelHandle model, byte[] name);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_model_row_set([Out] long[] rows, long capacity, out long count, ModelHandle model, int which);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_model_selection([In, Out] CandidateStruct[] table, long capacity, out long count, ModelHandle model);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_model_score(ref ScoresStruct scores, ModelHandle model, ref Matrix data, double level);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_model_save(out IntPtr text, out long length, ModelHandle model);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern void ellipsa_text_free(IntPtr text);
        [DllImport(Lib, CallingConvention = CallingConvention.Cdecl)] internal static extern int ellipsa_model_load(out ModelHandle model, byte[] text, long length);

        /// <summary>Throws EllipsaException for a non-zero status. Must run right after the failing
        /// call, on the same thread: ellipsa_last_error() is thread-local and the next call may replace it.</summary>
        internal static void Check(int status)
        {
            if (status == 0) return;
            string message = Utf8(ellipsa_last_error()); // copy first: the next call may invalidate it
            string name = Utf8(ellipsa_status_string(status));
            throw new EllipsaException((Status)status, name, message);
        }

        /// <summary>Copies a NUL-terminated UTF-8 string owned by the library.</summary>
        internal static string Utf8(IntPtr p)
        {
            if (p == IntPtr.Zero) return null;
            int n = 0;
            while (Marshal.ReadByte(p, n) != 0) ++n;
            var bytes = new byte[n];
            Marshal.Copy(p, bytes, 0, n);
            return Encoding.UTF8.GetString(bytes);
        }

        /// <summary>UTF-8 bytes with a terminating NUL, for const char* arguments.</summary>
        internal static byte[] Utf8z(string s)
        {
            if (s == null) throw new ArgumentNullException("s");
            byte[] b = Encoding.UTF8.GetBytes(s);
            Array.Resize(ref b, b.Length + 1);
            return b;
        }
    }
}
