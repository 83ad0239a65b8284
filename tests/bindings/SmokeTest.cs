// Smoke test of the C# binding (bindings-c/csharp/Ellipsa.cs) against libellipsa.
//
//   mcs -unsafe -out:smoke.exe SmokeTest.cs ../../bindings-c/csharp/Ellipsa.cs
//   LD_LIBRARY_PATH=<dir of libellipsa.so> mono smoke.exe
//
// Exit code 0 when every check passes, 1 otherwise. Reference values are computed
// here, independently of the library (two-pass mean/covariance, a small Cholesky,
// the closed form of the chi-square tail with 2 degrees of freedom).
// If ELLIPSA_CROSS_DIR is set, csharp_model.json is written there and any
// python_model.json / r_model.json found there is loaded and scored.
using System;
using System.IO;
using System.Linq;
using Ellipsa;

static class SmokeTest
{
    static int failures, checks;

    static void Check(bool ok, string what)
    {
        ++checks;
        if (!ok) { ++failures; Console.WriteLine("FAIL: " + what); }
    }

    static int Main()
    {
        try
        {
            Console.WriteLine("libellipsa " + Library.Version + " (binding written for " + Library.BindingVersionNumber + ")");
            Check(Library.VersionNumber / 100 == Library.BindingVersionNumber / 100, "major.minor of the loaded library matches the binding");
            Distributions();
            ClassicalFit();
            McdWithOutliers();
            MixtureAndMissing();
            RoundTrip();
            Errors();
            Names();
            Disposal();
            CrossLanguage();
        }
        catch (Exception e)
        {
            ++failures;
            Console.WriteLine("FAIL: unexpected exception: " + e);
        }
        Console.WriteLine((checks - failures) + " passed, " + failures + " failed");
        return failures == 0 ? 0 : 1;
    }

    // ---- invented data ----------------------------------------------------------------
    // Correlated normals x = mu + A z from a seeded System.Random (Box-Muller).
    static double[,] CorrelatedNormals(int n, Random rng, double[] mu, double[,] a)
    {
        int p = mu.Length;
        var x = new double[n, p];
        var z = new double[p];
        for (int i = 0; i < n; ++i)
        {
            for (int j = 0; j < p; ++j)
                z[j] = Math.Sqrt(-2 * Math.Log(1 - rng.NextDouble())) * Math.Cos(2 * Math.PI * rng.NextDouble());
            for (int j = 0; j < p; ++j)
            {
                double v = mu[j];
                for (int k = 0; k <= j; ++k) v += a[j, k] * z[k];
                x[i, j] = v;
            }
        }
        return x;
    }

    static readonly double[] Mu3 = { 1000.5, -3.25, 42.0 };
    static readonly double[,] A3 = { { 2.0, 0, 0 }, { 0.8, 0.5, 0 }, { -1.1, 0.3, 3.0 } };

    // ---- references written here -----------------------------------------------------------
    static void TwoPassMeanCov(double[,] x, out double[] mean, out double[,] cov)
    {
        int n = x.GetLength(0), p = x.GetLength(1);
        mean = new double[p];
        for (int j = 0; j < p; ++j) { double s = 0; for (int i = 0; i < n; ++i) s += x[i, j]; mean[j] = s / n; }
        cov = new double[p, p];
        for (int j = 0; j < p; ++j)
            for (int k = 0; k < p; ++k)
            {
                double s = 0;
                for (int i = 0; i < n; ++i) s += (x[i, j] - mean[j]) * (x[i, k] - mean[k]);
                cov[j, k] = s / (n - 1);
            }
    }

    // Squared Mahalanobis distance of x over the coordinates in idx, by a textbook Cholesky.
    static double Mahalanobis(double[] x, double[] m, double[,] s, int[] idx)
    {
        int q = idx.Length;
        var l = new double[q, q];
        for (int i = 0; i < q; ++i)
            for (int j = 0; j <= i; ++j)
            {
                double v = s[idx[i], idx[j]];
                for (int k = 0; k < j; ++k) v -= l[i, k] * l[j, k];
                l[i, j] = i == j ? Math.Sqrt(v) : v / l[j, j];
            }
        double d2 = 0;
        var y = new double[q];
        for (int i = 0; i < q; ++i)
        {
            double v = x[idx[i]] - m[idx[i]];
            for (int k = 0; k < i; ++k) v -= l[i, k] * y[k];
            y[i] = v / l[i, i];
            d2 += y[i] * y[i];
        }
        return d2;
    }

    static double[] Row(double[,] x, int i)
    {
        var r = new double[x.GetLength(1)];
        for (int j = 0; j < r.Length; ++j) r[j] = x[i, j];
        return r;
    }

    // ---- the checks --------------------------------------------------------------------------
    static void Distributions()
    {
        // chi-square with 2 df: P(X > x) = exp(-x/2), quantile -2 ln(1-q) (closed form).
        double q = Library.Chi2Quantile(0.975, 2);
        Check(Math.Abs(q - (-2 * Math.Log(0.025))) <= 1e-12 * q, "chi2 quantile(0.975, 2) = -2 ln 0.025");
        double t = Library.Chi2Tail(7.5, 2);
        Check(Math.Abs(t - Math.Exp(-3.75)) <= 1e-13 * t, "chi2 tail(7.5, 2) = exp(-3.75)");
    }

    static void ClassicalFit()
    {
        var rng = new Random(20240611);
        double[,] x = CorrelatedNormals(500, rng, Mu3, A3);
        double[] mean; double[,] cov;
        TwoPassMeanCov(x, out mean, out cov);

        using (Model m = Model.Fit(x, new FitSettings(Method.Classical) { ColumnNames = new[] { "temp", "pres", "flow" } }))
        {
            Check(m.Kind == ModelKind.Gaussian && m.Method == Method.Classical && m.Dimension == 3 && m.Components == 1, "describe");
            Check(m.RowsUsed == 500 && m.RowsDropped == 0, "rows used/dropped");
            Check(m.ColumnNames.SequenceEqual(new[] { "temp", "pres", "flow" }), "column names carried");
            Check(m.Diagnostic("divisor") == 2, "default divisor n-1");
            double[] loc = m.Location; double[,] sc = m.Scatter;
            double worstMean = 0, worstCov = 0;
            for (int j = 0; j < 3; ++j)
            {
                worstMean = Math.Max(worstMean, Math.Abs(loc[j] - mean[j]) / Math.Max(Math.Abs(mean[j]), Math.Sqrt(cov[j, j])));
                for (int k = 0; k < 3; ++k)
                    worstCov = Math.Max(worstCov, Math.Abs(sc[j, k] - cov[j, k]) / Math.Sqrt(cov[j, j] * cov[k, k]));
            }
            Console.WriteLine("classical: worst relative error mean " + worstMean.ToString("E2") + ", covariance " + worstCov.ToString("E2"));
            Check(worstMean <= 1e-12, "mean vs two-pass reference to 1e-12 relative");
            Check(worstCov <= 1e-12, "covariance vs two-pass reference to 1e-12 relative");

            // The same numbers from a column-major copy (strided view) and from a jagged array.
            int n = x.GetLength(0);
            var colMajor = new double[n * 3];
            var jagged = new double[n][];
            for (int i = 0; i < n; ++i) { jagged[i] = Row(x, i); for (int j = 0; j < 3; ++j) colMajor[i + j * n] = x[i, j]; }
            using (Model c = Model.Fit(colMajor, n, 3, 1, n, new FitSettings()))
            using (Model g = Model.Fit(jagged, new FitSettings()))
            {
                double dc = 0, dg = 0;
                for (int j = 0; j < 3; ++j)
                    for (int k = 0; k < 3; ++k)
                    {
                        dc = Math.Max(dc, Math.Abs(c.Scatter[j, k] - sc[j, k]) / Math.Sqrt(cov[j, j] * cov[k, k]));
                        dg = Math.Max(dg, Math.Abs(g.Scatter[j, k] - sc[j, k]) / Math.Sqrt(cov[j, j] * cov[k, k]));
                    }
                Check(dc <= 1e-14 && dg <= 1e-14, "column-major view and jagged copy give the row-major fit");
            }

            // Scores: distances against a Cholesky written here, contributions summing to them,
            // flags at the model's default reference (new rows: the phase II limit of Tracy,
            // Young & Mason 1992 for m = 500 rows), and a row with one NaN scored on 2
            // coordinates, whose phase II p-value has the closed form of an F(2, v) tail,
            // (1 + 2f/v)^(-v/2), v = m - 2, f = d2 m (m-2) / (2 (m+1) (m-1)).
            var y = new double[6, 3];
            for (int i = 0; i < 5; ++i) for (int j = 0; j < 3; ++j) y[i, j] = x[i * 37, j];
            y[4, 0] += 12; // far out along the first variable
            y[5, 0] = x[3, 0]; y[5, 1] = double.NaN; y[5, 2] = x[3, 2];
            Scores s = m.Score(y, 0.975);
            double cut3 = Library.HotellingLimit(Phase.Two, 500, 3, 0.025), worstD2 = 0;
            for (int i = 0; i < 5; ++i)
            {
                double d2 = Mahalanobis(Row(y, i), mean, cov, new[] { 0, 1, 2 });
                worstD2 = Math.Max(worstD2, Math.Abs(s.SquaredDistance[i] - d2) / d2);
                double sum = s.Contribution[i, 0] + s.Contribution[i, 1] + s.Contribution[i, 2];
                Check(Math.Abs(sum - s.SquaredDistance[i]) <= 1e-10 * s.SquaredDistance[i], "contributions sum to d2, row " + i);
                Check(s.Flag[i] == (s.SquaredDistance[i] > cut3 ? 1 : 0) && s.Observed[i] == 3 && s.Component[i] == 0, "flag/observed/component, row " + i);
                Check(s.PValue[i] > 0 && s.PValue[i] <= 1 && Math.Abs(s.Membership[i, 0] - 1) == 0, "p-value range and membership, row " + i);
            }
            Console.WriteLine("scores: worst relative error of d2 vs test Cholesky " + worstD2.ToString("E2"));
            Check(worstD2 <= 1e-10, "squared distances vs reference Cholesky to 1e-10 relative");
            Check(s.Flag[4] == 1, "row shifted by 12 in the first variable is flagged");
            double d2m = Mahalanobis(Row(y, 5), mean, cov, new[] { 0, 2 });
            Check(s.Observed[5] == 2 && Math.Abs(s.SquaredDistance[5] - d2m) <= 1e-10 * d2m, "NaN row scored on its 2 observed coordinates");
            double f2 = s.SquaredDistance[5] * 500.0 * 498.0 / (2.0 * 501.0 * 499.0);
            Check(Math.Abs(s.PValue[5] - Math.Pow(1 + 2 * f2 / 498.0, -498.0 / 2)) <= 1e-10 * s.PValue[5], "p-value on 2 coordinates is the F(2, 498) tail");
            Check(double.IsNaN(s.Contribution[5, 1]), "contribution of the missing coordinate is NaN");

            Scores only = m.Score(y, 0.975, ScoreOutputs.SquaredDistance);
            Check(only.PValue == null && only.Contribution == null && only.SquaredDistance.SequenceEqual(s.SquaredDistance), "partial outputs");
        }
    }

    static void McdWithOutliers()
    {
        var rng = new Random(7);
        double[,] x = CorrelatedNormals(200, rng, Mu3, A3);
        int[] planted = { 3, 17, 50, 51, 88, 120, 121, 150, 177, 199 };
        foreach (int i in planted) { x[i, 0] += 15; x[i, 1] -= 6; x[i, 2] += 20; }
        using (Model m = Model.Fit(x, new FitSettings(Method.Mcd) { Seed = 12345 }))
        {
            long[] outliers = m.Rows(RowSet.Outliers);
            Check(planted.All(i => outliers.Contains(i)), "every planted outlier is in the MCD outlier set");
            Check(outliers.Length - planted.Length <= 19, "at most ~10% of clean rows flagged (" + (outliers.Length - planted.Length) + ")");
            Check(m.Rows(RowSet.HSubset).Length == (long)m.Diagnostic("h"), "h-subset size equals diagnostic h");
            Check(planted.All(i => !m.Rows(RowSet.HSubset).Contains(i)), "no planted outlier in the h-subset");
            Scores s = m.Score(x);
            Check(planted.All(i => s.Flag[i] == 1), "scoring flags every planted outlier");
            double[] rl; double[,] rs;
            m.RawEstimate(out rl, out rs);
            Check(rl.Length == 3 && rs[0, 1] == rs[1, 0], "raw estimate shape and symmetry");
            Console.WriteLine("mcd: " + outliers.Length + " rows flagged by reweighting, " + planted.Length + " planted");
        }
    }

    static void MixtureAndMissing()
    {
        // Two well separated clusters: the model choice over K = 1..2 keeps K = 2.
        var rng = new Random(21);
        double[,] a = CorrelatedNormals(150, rng, new[] { 0.0, 0.0 }, new double[,] { { 1, 0 }, { 0.3, 1 } });
        double[,] b = CorrelatedNormals(150, rng, new[] { 12.0, -9.0 }, new double[,] { { 1, 0 }, { -0.2, 0.7 } });
        var x = new double[300, 2];
        for (int i = 0; i < 150; ++i) for (int j = 0; j < 2; ++j) { x[i, j] = a[i, j]; x[150 + i, j] = b[i, j]; }
        using (Model m = Model.Fit(x, new FitSettings(Method.Mixture) { ComponentsMin = 1, ComponentsMax = 2, Seed = 4 }))
        {
            Candidate[] table = m.Selection();
            Check(table.Length == 2 && table.Count(c => c.Chosen) == 1, "selection table: 2 candidates, one chosen");
            Check(m.Kind == ModelKind.Mixture && m.Components == 2 && table.Single(c => c.Chosen).Components == 2, "two clusters give K = 2");
            Scores s = m.Score(x);
            bool rowsSumToOne = true, split = true;
            for (int i = 0; i < 300; ++i)
            {
                rowsSumToOne &= Math.Abs(s.Membership[i, 0] + s.Membership[i, 1] - 1) <= 1e-12;
                split &= s.Component[i] == s.Component[i < 150 ? 0 : 150];
            }
            Check(rowsSumToOne && split && s.Component[0] != s.Component[150], "memberships sum to 1 and separate the clusters");
        }
        // Rows with NaN are dropped and counted by default.
        double[,] y = CorrelatedNormals(40, rng, Mu3, A3);
        y[5, 1] = double.NaN; y[9, 2] = double.NaN;
        using (Model m = Model.Fit(y, new FitSettings()))
            Check(m.RowsUsed == 38 && m.RowsDropped == 2 && m.Rows(RowSet.Dropped).SequenceEqual(new long[] { 5, 9 }), "NaN rows dropped and counted");
    }

    static void RoundTrip()
    {
        var rng = new Random(99);
        double[,] x = CorrelatedNormals(120, rng, Mu3, A3);
        double[,] y = CorrelatedNormals(15, rng, Mu3, A3);
        using (Model a = Model.Fit(x, new FitSettings(Method.LedoitWolf)))
        {
            string t1 = a.Save();
            using (Model b = Model.Load(t1))
            {
                string t2 = b.Save();
                Check(t1 == t2, "save -> load -> save gives identical text");
                Scores sa = a.Score(y), sb = b.Score(y);
                Check(sa.SquaredDistance.SequenceEqual(sb.SquaredDistance) && sa.PValue.SequenceEqual(sb.PValue)
                      && sa.Flag.SequenceEqual(sb.Flag) && sa.LogDensity.SequenceEqual(sb.LogDensity),
                      "scores of the loaded model are identical");
                Check(b.Method == Method.LedoitWolf && a.Diagnostic("shrinkage_intensity") == b.Diagnostic("shrinkage_intensity"), "method and diagnostics survive");
            }
        }
    }

    static void Errors()
    {
        var small = new double[3, 5];
        for (int i = 0; i < 3; ++i) for (int j = 0; j < 5; ++j) small[i, j] = i * 5 + j * j;
        try
        {
            using (Model.Fit(small, new FitSettings(Method.Classical))) { }
            Check(false, "classical fit of 3 x 5 must fail");
        }
        catch (EllipsaException e)
        {
            Console.WriteLine("expected error: " + e.Message);
            Check(e.Status == Status.ErrData && e.StatusName == "ELLIPSA_ERR_DATA", "3 x 5 classical fit gives ELLIPSA_ERR_DATA");
            Check(e.NativeMessage.StartsWith("ellipsa_model_fit"), "message starts with the failing function");
        }
        try
        {
            using (Model.Load("{}")) { }
            Check(false, "loading {} must fail");
        }
        catch (EllipsaException e)
        {
            Console.WriteLine("expected error: " + e.Message);
            Check(e.Status == Status.ErrFormat && e.StatusName == "ELLIPSA_ERR_FORMAT", "Load(\"{}\") gives ELLIPSA_ERR_FORMAT");
            Check(e.NativeMessage.StartsWith("ellipsa_model_load") && e.NativeMessage.Length > "ellipsa_model_load".Length, "load message names the function and says more");
        }
        try { Library.Chi2Quantile(1.5, 2); Check(false, "probability 1.5 must fail"); }
        catch (EllipsaException e) { Check(e.Status == Status.ErrArgument && e.StatusName == "ELLIPSA_ERR_ARGUMENT", "chi2 quantile(1.5) gives ELLIPSA_ERR_ARGUMENT"); }
        try { Model.Fit(new double[10], 4, 3, 3, 1, new FitSettings()); Check(false, "a view past the buffer must be refused"); }
        catch (ArgumentException) { Check(true, "binding refuses a view past its buffer"); }
        // A progress callback that asks to stop cancels the fit (FAST-MCD reports its stages),
        // and an exception thrown inside the callback comes back out of Fit unchanged.
        double[,] data = CorrelatedNormals(100, new Random(5), Mu3, A3);
        int calls = 0;
        var stop = new FitSettings(Method.Mcd) { Seed = 1, Progress = (stage, f) => { ++calls; return false; } };
        try { using (Model.Fit(data, stop)) { } Check(false, "a callback returning false must cancel"); }
        catch (EllipsaException e) { Check(e.Status == Status.ErrCancelled && calls == 1, "progress callback cancels: ELLIPSA_ERR_CANCELLED"); }
        var boom = new FitSettings(Method.Mcd) { Seed = 1, Progress = (stage, f) => { throw new InvalidOperationException("from callback"); } };
        try { using (Model.Fit(data, boom)) { } Check(false, "a throwing callback must stop the fit"); }
        catch (InvalidOperationException e) { Check(e.Message == "from callback", "callback exception rethrown by Fit"); }
        double last = -1; bool monotone = true;
        var watch = new FitSettings(Method.Mcd) { Seed = 1, Progress = (stage, f) => { monotone &= f >= last && f <= 1; last = f; return true; } };
        using (Model.Fit(data, watch)) { }
        Check(monotone && last >= 0, "progress fractions non-decreasing in [0, 1]");
    }

    // Names of methods, covariance structures and missing-value policies, from the library.
    // Expected names and codes: the ELLIPSA_METHOD_, ELLIPSA_STRUCTURE_ and ELLIPSA_MISSING_
    // macros and their documented names in capi/include/ellipsa.h.
    static void Names()
    {
        string[] methods = { "classical", "ledoit-wolf", "oas", "mcd", "detmcd", "mrcd", "mixture" };
        for (int i = 0; i < methods.Length; ++i)
            Check(Library.MethodName((Method)(i + 1)) == methods[i] && (int)Library.MethodFromName(methods[i]) == i + 1,
                  "method " + (i + 1) + " is named " + methods[i] + " both ways");
        string[] structures = { "full", "diagonal", "tied", "spherical", "all" };
        for (int i = 0; i < structures.Length; ++i)
            Check(Library.StructureName((Structure)(i + 1)) == structures[i] &&
                  (int)Library.StructureFromName(structures[i]) == i + 1,
                  "structure " + (i + 1) + " is named " + structures[i] + " both ways");
        string[] policies = { "drop", "refuse", "em" };
        for (int i = 0; i < policies.Length; ++i)
            Check(Library.MissingName((MissingPolicy)(i + 1)) == policies[i] &&
                  (int)Library.MissingFromName(policies[i]) == i + 1,
                  "missing-value policy " + (i + 1) + " is named " + policies[i] + " both ways");
        Check(Library.StructureName((Structure)99) == "unknown" && Library.MissingName((MissingPolicy)0) == "unknown",
              "codes the library does not know are named \"unknown\"");
        try { Library.StructureFromName("banded"); Check(false, "an unknown structure name must fail"); }
        catch (EllipsaException e)
        {
            Check(e.Status == Status.ErrArgument && structures.All(n => e.NativeMessage.Contains(n)),
                  "unknown structure name: ELLIPSA_ERR_ARGUMENT, message lists the names");
        }
        try { Library.MissingFromName("impute"); Check(false, "an unknown missing-value policy must fail"); }
        catch (EllipsaException e) { Check(e.Status == Status.ErrArgument, "unknown missing-value policy: ELLIPSA_ERR_ARGUMENT"); }
    }

    static void Disposal()
    {
        Model m = Model.Fit(CorrelatedNormals(30, new Random(3), Mu3, A3), new FitSettings());
        ModelHandle h = m.Handle;
        m.Dispose();
        Check(h.IsClosed, "Dispose closes the native handle");
        try { var unused = m.Location; Check(false, "a disposed model must refuse queries"); }
        catch (ObjectDisposedException) { Check(true, "disposed model refuses queries"); }
        m.Dispose(); // twice is harmless
        using (FitOptionsHandle o = FitOptionsHandle.Create(new FitSettings(Method.Mcd) { Alpha = 0.75 }))
            Check(!o.IsInvalid, "options handle created");
        try { FitOptionsHandle.Create(new FitSettings(Method.Mcd) { Alpha = 0.2 }); Check(false, "alpha 0.2 must be refused"); }
        catch (EllipsaException e) { Check(e.Status == Status.ErrArgument, "alpha outside [0.5, 1] gives ELLIPSA_ERR_ARGUMENT"); }
    }

    static void CrossLanguage()
    {
        string dir = Environment.GetEnvironmentVariable("ELLIPSA_CROSS_DIR");
        if (string.IsNullOrEmpty(dir)) { Console.WriteLine("ELLIPSA_CROSS_DIR not set: cross-language check skipped"); return; }
        Directory.CreateDirectory(dir);
        double[,] x = CorrelatedNormals(80, new Random(11), Mu3, A3);
        using (Model m = Model.Fit(x, new FitSettings()))
            File.WriteAllText(Path.Combine(dir, "csharp_model.json"), m.Save());
        foreach (string other in new[] { "python_model.json", "r_model.json" })
        {
            string path = Path.Combine(dir, other);
            if (!File.Exists(path)) { Console.WriteLine(other + " not found: skipped"); continue; }
            using (Model m = Model.Load(File.ReadAllText(path)))
            {
                long p = m.Dimension;
                var rows = new double[4, p];
                double[] loc = m.Location;
                for (int i = 0; i < 4; ++i) for (int j = 0; j < p; ++j) rows[i, j] = loc[j] + i;
                Scores s = m.Score(rows);
                bool finite = s.SquaredDistance.All(d => d >= 0 && !double.IsInfinity(d)) && s.PValue.All(v => v >= 0 && v <= 1);
                // A Gaussian model puts its own location at distance 0.
                Check(finite && (m.Kind != ModelKind.Gaussian || s.SquaredDistance[0] < 1e-20), other + " loads and scores");
                Console.WriteLine(other + ": loaded and scored");
            }
        }
    }
}
