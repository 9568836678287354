using System.Collections.Frozen;
using Microsoft.ML.Transforms.Text;

namespace TopicGroups.Core.Terms;

/// <summary>
/// The English stop-word list that ML.NET's <c>RemoveDefaultStopWords</c> uses, read once from the resource
/// embedded in the Microsoft.ML.Transforms assembly (one word per line), so the list is maintained with
/// that package rather than typed here. Loaded on first use.
/// </summary>
internal static class StopWords
{
    internal const string EnglishResourceName = "Microsoft.ML.Transforms.Text.StopWords.English.txt";

    /// <summary>The English list, lower-case, without duplicates.</summary>
    public static FrozenSet<string> English => EnglishHolder.Words;

    internal static FrozenSet<string> Load(string resourceName)
    {
        var assembly = typeof(StopWordsRemovingEstimator).Assembly;
        using Stream stream = assembly.GetManifestResourceStream(resourceName)
            ?? throw new InvalidOperationException(
                $"{assembly.GetName().Name} {assembly.GetName().Version} has no resource '{resourceName}'; " +
                "the stop-word list moved in this Microsoft.ML version. Pin the version in Directory.Packages.props " +
                "or update StopWords.EnglishResourceName.");
        using var reader = new StreamReader(stream);
        var words = new HashSet<string>(StringComparer.Ordinal);
        while (reader.ReadLine() is { } line)
        {
            string word = line.Trim().ToLowerInvariant();
            if (word.Length > 0)
            {
                words.Add(word);
            }
        }

        if (words.Count == 0)
        {
            throw new InvalidOperationException($"The resource '{resourceName}' holds no words.");
        }

        return words.ToFrozenSet(StringComparer.Ordinal);
    }

    // A nested holder: the runtime initialises it on first access to English, exactly once.
    private static class EnglishHolder
    {
        public static readonly FrozenSet<string> Words = Load(EnglishResourceName);
    }
}
