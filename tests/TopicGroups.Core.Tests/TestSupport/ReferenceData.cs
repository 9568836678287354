using System.IO.Compression;
using System.Text.Json;

namespace TopicGroups.Core.Tests.TestSupport;

/// <summary>
/// Files in tests/TopicGroups.Core.Tests/Data: reference data and the values external libraries computed
/// on it (see make_reference.py there for the exact command). The build copies them next to the test
/// binaries; failing that they are looked for in the source tree above.
/// </summary>
internal static class ReferenceData
{
    private static readonly Lazy<string> Folder = new(FindFolder);

    private static readonly Lazy<JsonElement> Values = new(() =>
        JsonDocument.Parse(File.ReadAllText(Path.Combine(Folder.Value, "reference_values.json"))).RootElement);

    /// <summary>Any JSON file of the Data folder, e.g. silhouette_reference.json.</summary>
    public static JsonElement Json(string fileName) =>
        JsonDocument.Parse(File.ReadAllText(Path.Combine(Folder.Value, fileName))).RootElement;

    /// <summary>The whole reference_values.json.</summary>
    public static JsonElement ReferenceValues => Values.Value;

    /// <summary>The UCI handwritten digits: 1,797 rows of 64 pixel values (0–16) and the true digit of each.</summary>
    public static (float[] Pixels, int[] Digits) HandwrittenDigits()
    {
        using FileStream file = File.OpenRead(Path.Combine(Folder.Value, "digits.csv.gz"));
        using var gzip = new GZipStream(file, CompressionMode.Decompress);
        using var reader = new StreamReader(gzip);
        var pixels = new List<float>(1797 * 64);
        var digits = new List<int>(1797);
        while (reader.ReadLine() is { } line)
        {
            string[] fields = line.Split(',');
            for (int p = 0; p < fields.Length - 1; p++)
            {
                pixels.Add(float.Parse(fields[p], System.Globalization.CultureInfo.InvariantCulture));
            }

            digits.Add((int)float.Parse(fields[^1], System.Globalization.CultureInfo.InvariantCulture));
        }

        return (pixels.ToArray(), digits.ToArray());
    }

    public static double[] Doubles(JsonElement array) => array.EnumerateArray().Select(e => e.GetDouble()).ToArray();

    public static int[] Ints(JsonElement array) => array.EnumerateArray().Select(e => e.GetInt32()).ToArray();

    private static string FindFolder()
    {
        string copied = Path.Combine(AppContext.BaseDirectory, "Data");
        if (File.Exists(Path.Combine(copied, "reference_values.json")))
        {
            return copied;
        }

        for (DirectoryInfo? directory = new(AppContext.BaseDirectory); directory is not null; directory = directory.Parent)
        {
            string candidate = Path.Combine(directory.FullName, "tests", "TopicGroups.Core.Tests", "Data");
            if (File.Exists(Path.Combine(candidate, "reference_values.json")))
            {
                return candidate;
            }
        }

        throw new DirectoryNotFoundException(
            $"tests/TopicGroups.Core.Tests/Data not found above {AppContext.BaseDirectory}; run the tests from a checkout of the repository.");
    }
}
