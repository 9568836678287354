using System.Diagnostics;
using System.Diagnostics.Metrics;
using Grpc.Core;

namespace TopicGroups.Server.Services;

/// <summary>
/// The server's instruments on the "TopicGroups.Server" meter (docs/operations.md, Metrics). Tag names follow the
/// OpenTelemetry RPC conventions (rpc.service, rpc.method, rpc.grpc.status_code) so standard dashboards read them.
/// </summary>
internal sealed class ServerMetrics
{
    public const string MeterName = GroupingRunner.MeterName;
    public const string CallsInstrument = "topicgroups.calls";
    public const string CallDurationInstrument = "topicgroups.call.duration";
    public const string DocumentsGroupedInstrument = "topicgroups.documents.grouped";
    public const string RejectionsInstrument = "topicgroups.rejections";

    /// <summary>Rejection reasons: the values of the "reason" tag on <see cref="RejectionsInstrument"/>.</summary>
    public static class Reasons
    {
        public const string Validation = "validation";
        public const string Admission = "admission";
        public const string Memory = "memory";
        public const string Deadline = "deadline";
        public const string Shutdown = "shutdown";
    }

    // Seconds: from a health check (milliseconds) to a large grouping near its deadline (minutes).
    private static readonly double[] DurationBuckets = [0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30, 60, 120, 300, 600];

    private readonly Counter<long> _calls;
    private readonly Histogram<double> _callDuration;
    private readonly Counter<long> _documentsGrouped;
    private readonly Counter<long> _rejections;

    public ServerMetrics(IMeterFactory meterFactory)
    {
        Meter meter = meterFactory.Create(MeterName);
        _calls = meter.CreateCounter<long>(CallsInstrument, unit: "{call}", description: "Finished calls, by method and gRPC status code.");
        _callDuration = meter.CreateHistogram(
            CallDurationInstrument,
            unit: "s",
            description: "Time from a call's start to its status, by method and gRPC status code.",
            tags: null,
            advice: new InstrumentAdvice<double> { HistogramBucketBoundaries = DurationBuckets });
        _documentsGrouped = meter.CreateCounter<long>(
            DocumentsGroupedInstrument, unit: "{document}", description: "Documents in groupings that finished successfully.");
        _rejections = meter.CreateCounter<long>(
            RejectionsInstrument,
            unit: "{call}",
            description: "Calls refused or stopped, by reason: validation, admission (slots busy), memory (estimate over the limit), deadline, shutdown.");
    }

    public void RecordCall(string service, string method, StatusCode status, TimeSpan duration)
    {
        var tags = new TagList
        {
            { "rpc.service", service },
            { "rpc.method", method },
            { "rpc.grpc.status_code", (int)status },
        };
        _calls.Add(1, tags);
        _callDuration.Record(duration.TotalSeconds, tags);
    }

    public void RecordGrouped(int documents) => _documentsGrouped.Add(documents);

    public void RecordRejection(string method, string reason) =>
        _rejections.Add(1, new TagList { { "rpc.method", method }, { "reason", reason } });
}
