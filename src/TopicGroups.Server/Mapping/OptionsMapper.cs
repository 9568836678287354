using CoreOptions = TopicGroups.Core.Grouping.GroupingOptions;
using ProtoOptions = TopicGroups.Protos.V1.GroupingOptions;

namespace TopicGroups.Server.Mapping;

/// <summary>Proto options to Core options. A proto zero (or an unset seed) means the Core default.</summary>
internal static class OptionsMapper
{
    /// <summary>Maps options that <see cref="Validation.RequestValidator"/> has already checked.</summary>
    public static CoreOptions ToCore(ProtoOptions options)
    {
        var defaults = new CoreOptions { GroupCount = options.GroupCount };
        return defaults with
        {
            Seed = options.HasSeed ? options.Seed : defaults.Seed,
            RestartCount = options.RestartCount == 0 ? defaults.RestartCount : options.RestartCount,
            MaxIterations = options.MaxIterations == 0 ? defaults.MaxIterations : options.MaxIterations,
            TermCount = options.TermCount == 0 ? defaults.TermCount : options.TermCount,
            ExampleCount = options.ExampleCount == 0 ? defaults.ExampleCount : options.ExampleCount,
            IncludeBigrams = options.IncludeBigrams,
            MinimumGroupCount = options.GroupCountRange?.Minimum ?? 0,
            MaximumGroupCount = options.GroupCountRange?.Maximum ?? 0,
            SilhouetteSampleSize = options.SilhouetteSampleSize == 0 ? defaults.SilhouetteSampleSize : options.SilhouetteSampleSize,
            OutlierScoreThreshold = options.OutlierThreshold == 0 ? defaults.OutlierScoreThreshold : options.OutlierThreshold,
            OutlierMinimumGroupSize = options.OutlierMinimumGroupSize == 0 ? defaults.OutlierMinimumGroupSize : options.OutlierMinimumGroupSize,
            IncludeMap = options.IncludeMap,
        };
    }
}
