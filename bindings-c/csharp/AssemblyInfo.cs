// Identity of Ellipsa.dll. The version is the project's one version
// (docs/versioning.md): kept equal to project(ellipsa VERSION ...) in the top
// CMakeLists.txt by the test version.agree.
using System.Reflection;

[assembly: AssemblyTitle("Ellipsa")]
[assembly: AssemblyDescription("C# binding of the ellipsa C interface (libellipsa)")]
[assembly: AssemblyVersion("0.1.0.0")]
[assembly: AssemblyFileVersion("0.1.0.0")]
[assembly: AssemblyInformationalVersion("0.1.0")]
