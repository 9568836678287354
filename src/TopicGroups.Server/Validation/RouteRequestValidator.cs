using Google.Protobuf;
using Google.Protobuf.Collections;
using Google.Rpc;
using TopicGroups.Core.Vectors;
using Proto = TopicGroups.Protos.V1;

namespace TopicGroups.Server.Validation;

/// <summary>
/// Checks documents to route (ids and embeddings; texts are not needed) and copies their embeddings once into one
/// row-major float[]. Bad documents give INVALID_ARGUMENT with up to <see cref="RequestValidator.MaxViolations"/>
/// field violations; too many documents or values give RESOURCE_EXHAUSTED stating the limit. Document indexes
/// in field names count within the request (or the chunk, for a stream: the field names it as chunks[i]).
/// </summary>
internal static class RouteRequestValidator
{
    /// <summary>The documents as a matrix of <paramref name="dimensions"/> columns (the saved grouping's).</summary>
    public static (string[] Ids, EmbeddingMatrix Embeddings) ToMatrix(
        RepeatedField<Proto.Document> documents, int dimensions, TopicGroupsLimits limits, string prefix)
    {
        int n = documents.Count;
        if (n > limits.MaxDocuments)
        {
            throw StatusErrors.ResourceExhausted(
                $"{prefix}documents",
                $"has {n} documents; this server routes at most {limits.MaxDocuments} per message (TopicGroups:Limits:MaxDocuments). "
                + "Send them in smaller chunks through StreamRouteDocuments.");
        }

        if ((long)n * dimensions > limits.MaxEmbeddingValues)
        {
            throw StatusErrors.ResourceExhausted(
                $"{prefix}documents",
                $"hold {(long)n * dimensions} embedding values; this server takes at most {limits.MaxEmbeddingValues} per message "
                + "(TopicGroups:Limits:MaxEmbeddingValues). Send them in smaller chunks through StreamRouteDocuments.");
        }

        var violations = new List<BadRequest.Types.FieldViolation>();
        void Add(string field, string description)
        {
            if (violations.Count < RequestValidator.MaxViolations)
            {
                violations.Add(new BadRequest.Types.FieldViolation { Field = field, Description = description });
            }
        }

        float[] values = new float[checked(n * dimensions)];
        string[] ids = new string[n];
        for (int i = 0; i < n && violations.Count < RequestValidator.MaxViolations; i++)
        {
            Proto.Document document = documents[i];
            string field = $"{prefix}documents[{i}]";
            ids[i] = document.Id;
            if (document.Id.Length is 0 or > TopicGroupsLimitsDefaults.MaxIdLength)
            {
                Add($"{field}.id", $"has {document.Id.Length} characters; give every document an id of 1-{TopicGroupsLimitsDefaults.MaxIdLength} characters.");
            }

            ReadOnlySpan<float> embedding = UnsafeCollectionOperations.AsSpan(document.Embedding);
            if (embedding.Length != dimensions)
            {
                Add(
                    $"{field}.embedding",
                    embedding.Length == 0
                        ? $"is empty; send the embedding of the document's text ({dimensions} values, from the model the grouping was made with)."
                        : $"has {embedding.Length} values but the grouping was made from {dimensions}-dimensional embeddings; use the same embedding model.");
                continue;
            }

            bool anyNonZero = false;
            int bad = -1;
            for (int j = 0; j < embedding.Length; j++)
            {
                if (!float.IsFinite(embedding[j]))
                {
                    bad = j;
                    break;
                }

                anyNonZero |= embedding[j] != 0f;
            }

            if (bad >= 0)
            {
                Add($"{field}.embedding", $"has {embedding[bad]} at position {bad}; every value must be a finite number (check the embedding model's output).");
            }
            else if (!anyNonZero)
            {
                Add($"{field}.embedding", "is all zeros, so it has no direction to compare; send the document's real embedding or leave the document out.");
            }
            else
            {
                embedding.CopyTo(values.AsSpan(i * dimensions, dimensions));
            }
        }

        if (violations.Count > 0)
        {
            throw StatusErrors.InvalidArgument(violations);
        }

        var matrix = new EmbeddingMatrix(values, n, dimensions);
        if (RowNormalisation.FindInvalidRow(matrix, out string? reason) is int row)
        {
            throw StatusErrors.InvalidArgument(
                $"{prefix}documents[{row}].embedding",
                $"cannot be scaled to unit length: it {reason}. Send the document's real embedding or leave the document out.");
        }

        return (ids, matrix);
    }
}
