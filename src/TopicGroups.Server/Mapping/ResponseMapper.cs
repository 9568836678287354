using TopicGroups.Core.Clustering;
using TopicGroups.Core.Grouping;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Mapping;

/// <summary>Core results and progress to proto messages. Copies values; computes nothing.</summary>
internal static class ResponseMapper
{
    /// <param name="result">The Core's result.</param>
    /// <param name="packedPlacements">options.packed_placements: the placements go into packed_documents as columns instead of documents.</param>
    public static Proto.GroupDocumentsResponse ToProto(GroupingResult result, bool packedPlacements = false)
    {
        var response = new Proto.GroupDocumentsResponse { Statistics = ToProto(result.Statistics) };
        response.Groups.Capacity = result.Groups.Count;
        foreach (GroupSummary group in result.Groups)
        {
            response.Groups.Add(ToProto(group));
        }

        if (packedPlacements)
        {
            response.PackedDocuments = ToPacked(result.Documents);
        }
        else
        {
            response.Documents.Capacity = result.Documents.Count;
            foreach (DocumentPlacement placement in result.Documents)
            {
                response.Documents.Add(new Proto.DocumentPlacement
                {
                    DocumentId = placement.DocumentId,
                    GroupId = placement.GroupId,
                    Similarity = placement.Similarity,
                    Margin = placement.Margin,
                    RunnerUpGroupId = placement.RunnerUpGroupId,
                    IsOutlier = placement.IsOutlier,
                    RunnerUpSimilarity = placement.RunnerUpSimilarity,
                });
            }
        }

        if (result.GroupCountChoice is { } choice)
        {
            response.GroupCountChoice = ToProto(choice);
        }

        if (result.Quality is { } quality)
        {
            response.Quality = new Proto.GroupingQuality
            {
                SampleSize = quality.SampleSize,
                NoStructure = quality.NoStructure,
                NoStructureThreshold = quality.NoStructureThreshold,
            };
            if (double.IsFinite(quality.Silhouette))
            {
                response.Quality.Silhouette = quality.Silhouette;
            }
        }

        if (result.Map is { } map)
        {
            DocumentMapMapper.AddTo(response, map);
        }

        return response;
    }

    /// <summary>One column per placement field, in document order; no message per document and no ids.</summary>
    private static Proto.PackedPlacements ToPacked(IReadOnlyList<DocumentPlacement> placements)
    {
        int n = placements.Count;
        var packed = new Proto.PackedPlacements();
        packed.GroupIds.Capacity = n;
        packed.Similarities.Capacity = n;
        packed.Margins.Capacity = n;
        packed.RunnerUpGroupIds.Capacity = n;
        packed.RunnerUpSimilarities.Capacity = n;
        packed.IsOutliers.Capacity = n;
        for (int i = 0; i < n; i++)
        {
            DocumentPlacement placement = placements[i];
            packed.GroupIds.Add(placement.GroupId);
            packed.Similarities.Add(placement.Similarity);
            packed.Margins.Add(placement.Margin);
            packed.RunnerUpGroupIds.Add(placement.RunnerUpGroupId);
            packed.RunnerUpSimilarities.Add(placement.RunnerUpSimilarity);
            packed.IsOutliers.Add(placement.IsOutlier);
        }

        return packed;
    }

    public static Proto.GroupingProgress ToProto(GroupingProgress progress) => new()
    {
        Stage = progress.Stage switch
        {
            GroupingStage.Seeding => Proto.GroupingStage.Seeding,
            GroupingStage.Refining => Proto.GroupingStage.Refining,
            GroupingStage.Describing => Proto.GroupingStage.Describing,
            GroupingStage.ChoosingGroupCount => Proto.GroupingStage.ChoosingGroupCount,
            _ => Proto.GroupingStage.Unspecified,
        },
        Restart = progress.Restart,
        Iteration = progress.Iteration,
        Objective = progress.Objective,
    };

    private static Proto.Group ToProto(GroupSummary group)
    {
        var proto = new Proto.Group
        {
            Id = group.Id,
            Size = group.Size,
            Cohesion = group.Cohesion,
            OutlierCount = group.OutlierCount,
        };
        if (group.Quality is { } quality)
        {
            proto.NearestGroupId = quality.NearestGroupId;
            proto.NearestGroupSimilarity = double.IsFinite(quality.NearestCentreSimilarity) ? quality.NearestCentreSimilarity : 0;
            proto.SilhouetteSampleCount = quality.SampledMembers;
            if (double.IsFinite(quality.Silhouette))
            {
                proto.Silhouette = quality.Silhouette;
            }

            foreach (GroupSuggestion suggestion in quality.Suggestions)
            {
                proto.Suggestions.Add(ToProto(suggestion));
            }
        }

        foreach (var term in group.Terms)
        {
            proto.Terms.Add(new Proto.WeightedTerm { Term = term.Term, Weight = term.Weight });
        }

        foreach (GroupExample example in group.Examples)
        {
            proto.Examples.Add(new Proto.GroupExample
            {
                DocumentId = example.DocumentId,
                Text = example.Text,
                Similarity = example.Similarity,
            });
        }

        return proto;
    }

    private static Proto.GroupSuggestion ToProto(GroupSuggestion suggestion)
    {
        var proto = new Proto.GroupSuggestion
        {
            Kind = suggestion.Kind switch
            {
                SuggestionKind.ProbablyTwoThemes => Proto.SuggestionKind.ProbablyTwoThemes,
                SuggestionKind.CloseToGroup => Proto.SuggestionKind.CloseToGroup,
                _ => Proto.SuggestionKind.Unspecified,
            },
            Message = suggestion.Message,
            Cohesion = suggestion.Cohesion,
            SplitCohesion = suggestion.SplitCohesion,
            SpreadRemoved = suggestion.SpreadRemoved,
            SplitSilhouette = suggestion.SplitSilhouette,
            OtherGroupId = suggestion.OtherGroupId,
            CentreSimilarity = suggestion.CentreSimilarity,
            PairSilhouette = suggestion.PairSilhouette,
        };
        proto.PartSizes.Add(suggestion.PartSizes);
        return proto;
    }

    private static Proto.GroupCountChoice ToProto(GroupCountSearchResult choice)
    {
        var proto = new Proto.GroupCountChoice
        {
            Minimum = choice.MinimumGroupCount,
            Maximum = choice.MaximumGroupCount,
            ChosenGroupCount = choice.ChosenGroupCount,
            BestGroupCount = choice.BestGroupCount,
            BestSilhouette = choice.BestSilhouette,
            Reason = choice.Reason switch
            {
                GroupCountChoiceReason.HighestSilhouette => Proto.GroupCountChoiceReason.HighestSilhouette,
                GroupCountChoiceReason.NearTieFewerGroups => Proto.GroupCountChoiceReason.NearTieFewerGroups,
                GroupCountChoiceReason.NoStructure => Proto.GroupCountChoiceReason.NoStructure,
                _ => Proto.GroupCountChoiceReason.Unspecified,
            },
            Explanation = choice.Explanation,
            NoStructure = choice.NoStructure,
            NoStructureThreshold = choice.NoStructureThreshold,
            TieTolerance = choice.TieTolerance,
            CandidateDocumentCount = choice.CandidateRows,
            SilhouetteSampleSize = choice.SampleSize,
            Seconds = choice.Elapsed.TotalSeconds,
        };
        foreach (GroupCountCandidate candidate in choice.Curve)
        {
            proto.Candidates.Add(new Proto.GroupCountCandidate
            {
                GroupCount = candidate.GroupCount,
                Silhouette = candidate.Silhouette,
                Objective = candidate.Objective,
                Seconds = candidate.Elapsed.TotalSeconds,
                SilhouetteStandardError = candidate.SilhouetteStandardError,
                Moves = candidate.Moves,
                WarmStarted = candidate.WarmStarted,
            });
        }

        return proto;
    }

    private static Proto.RunStatistics ToProto(RunStatistics statistics) => new()
    {
        Objective = statistics.Objective,
        Iterations = statistics.Iterations,
        Converged = statistics.Converged,
        Seconds = statistics.Elapsed.TotalSeconds,
        SeedingSeconds = statistics.SeedingTime.TotalSeconds,
        RestartCount = statistics.RestartCount,
        DocumentCount = statistics.DocumentCount,
        Dimensions = statistics.Dimensions,
    };
}
