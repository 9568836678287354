using System.Diagnostics;
using System.Globalization;
using TopicGroups.Protos.V1;

namespace TopicGroups.Cli.Output;

/// <summary>
/// A single status line on stderr, rewritten in place ("\r") while the service works: stage,
/// restart, iteration, objective. Only used when stderr is a terminal, so redirected output and
/// logs never contain it. Rewrites at most every 100 ms; Dispose clears the line.
/// </summary>
internal sealed class ProgressLine : IProgress<GroupingProgress>, IProgress<(int Done, int Total)>, IDisposable
{
    private static readonly TimeSpan MinimumInterval = TimeSpan.FromMilliseconds(100);

    private readonly TextWriter _error;
    private readonly Stopwatch _sinceLastWrite = Stopwatch.StartNew();
    private readonly Lock _lock = new();
    private int _lastLength;
    private bool _disposed;

    private ProgressLine(TextWriter error) => _error = error;

    /// <summary>A progress line on <paramref name="error"/> if it is the console's stderr and a terminal; otherwise null.</summary>
    public static ProgressLine? ForTerminal(TextWriter error, int documentCount = 0) =>
        ReferenceEquals(error, Console.Error) && !Console.IsErrorRedirected ? new ProgressLine(error) { DocumentCount = documentCount } : null;

    /// <summary>Documents in the batch, shown while they are sent; 0 when unknown.</summary>
    public int DocumentCount { get; init; }

    public void Report(GroupingProgress value) => Write(Describe(value, DocumentCount), force: false);

    public void Report((int Done, int Total) value) =>
        Write(string.Create(CultureInfo.InvariantCulture, $"embedding {value.Done:N0} of {value.Total:N0} texts"), force: value.Done == value.Total);

    internal static string Describe(GroupingProgress progress, int documentCount) => progress.Stage switch
    {
        GroupingStage.Receiving => string.Create(CultureInfo.InvariantCulture,
            $"sending documents: {progress.DocumentsReceived:N0}{(documentCount > 0 ? $" of {documentCount:N0}" : "")} received"),
        GroupingStage.Seeding => $"choosing initial centres (restart {progress.Restart + 1})",
        GroupingStage.Refining => string.Create(CultureInfo.InvariantCulture,
            $"refining: restart {progress.Restart + 1}, iteration {progress.Iteration}, objective {progress.Objective:F4}"),
        GroupingStage.Describing => "describing groups (terms, examples, outliers)",
        GroupingStage.Embedding => string.Create(CultureInfo.InvariantCulture,
            $"the service is embedding the texts: {progress.DocumentsEmbedded:N0} of {progress.DocumentsToEmbed:N0}"),
        GroupingStage.ChoosingGroupCount => string.Create(CultureInfo.InvariantCulture,
            $"choosing the number of groups: {progress.Iteration} groups scored, silhouette {progress.Objective:F3}"),
        _ => "working",
    };

    public void Dispose()
    {
        lock (_lock)
        {
            if (!_disposed && _lastLength > 0)
            {
                _error.Write("\r" + new string(' ', _lastLength) + "\r");
                _error.Flush();
            }

            _disposed = true;
        }
    }

    private void Write(string text, bool force)
    {
        lock (_lock)
        {
            if (_disposed || (!force && _lastLength > 0 && _sinceLastWrite.Elapsed < MinimumInterval))
            {
                return;
            }

            _error.Write("\r" + text.PadRight(_lastLength));
            _error.Flush();
            _lastLength = text.Length;
            _sinceLastWrite.Restart();
        }
    }
}
