using System.Collections.Frozen;
using Microsoft.ML.Transforms.Text;

namespace TopicGroups.Core.Terms;

/// <summary>
/// The English stop-word list that ML.NET's <c>RemoveDefaultStopWords</c> uses, read once from the resource
/// embedded in the Microsoft.ML.Transforms assembly (one word per line), so the list is maintained with
/// that package rather than typed here, plus <see cref="Supplement"/>. Loaded on first use.
/// </summary>
internal static class StopWords
{
    internal const string EnglishResourceName = "Microsoft.ML.Transforms.Text.StopWords.English.txt";

    /// <summary>
    /// Words the ML.NET resource lacks: it stops at "would" (nothing from "yet" on) and has no "i", so "your"
    /// led support-ticket groups' terms. Taken from the Glasgow IR group's list as shipped in scikit-learn 1.2.1's
    /// ENGLISH_STOP_WORDS (the words of that list missing from ML.NET's, minus the content words "bill", "fifty", "thick").
    /// </summary>
    internal static readonly string[] Supplement = ["i", "yet", "you", "your", "yours", "yourself", "yourselves"];

    /// <summary>The English list (ML.NET's plus <see cref="Supplement"/>), lower-case, without duplicates.</summary>
    public static FrozenSet<string> English => EnglishHolder.Words;

    internal static FrozenSet<string> Load(string resourceName, IEnumerable<string>? supplement = null)
    {
        var assembly = typeof(StopWordsRemovingEstimator).Assembly;
        using Stream stream = assembly.GetManifestResourceStream(resourceName)
            ?? throw new InvalidOperationException(
                $"{assembly.GetName().Name} {assembly.GetName().Version} has no resource '{resourceName}'; " +
                "the stop-word list moved in this Microsoft.ML version. Pin the version in Directory.Packages.props " +
                "or update StopWords.EnglishResourceName.");
        using var reader = new StreamReader(stream);
        var words = new HashSet<string>(supplement ?? [], StringComparer.Ordinal);
        while (reader.ReadLine() is { } line)
        {
            string word = line.Trim().ToLowerInvariant();
            if (word.Length > 0)
            {
                words.Add(word);
            }
        }

        if (words.Count == (supplement?.Count() ?? 0))
        {
            throw new InvalidOperationException($"The resource '{resourceName}' holds no words.");
        }

        return words.ToFrozenSet(StringComparer.Ordinal);
    }

    // A nested holder: the runtime initialises it on first access to English, exactly once.
    private static class EnglishHolder
    {
        public static readonly FrozenSet<string> Words = Load(EnglishResourceName, Supplement);
    }
}
