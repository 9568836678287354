using System.Runtime.CompilerServices;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>The assignment step: each row goes to its most similar centroid.</summary>
internal static class GroupAssignment
{
    /// <summary>
    /// Assigns every row to the argmax-cosine centroid (Dhillon &amp; Modha, 2001, §3); ties go to the lower
    /// group index so runs repeat. Also records each row's cosine and its runner-up (best other group).
    /// Returns the number of rows whose group changed and the mean best cosine (against these centroids).
    /// </summary>
    public static (int Reassigned, double Objective) AssignAll(ClusteringWorkspace ws)
    {
        RowBlocks blocks = ws.Blocks;
        ws.Panel.Pack(ws.Centroids);
        blocks.ForEachBlock((block, worker) => AssignBlock(ws, block, worker));

        int reassigned = 0;
        double sum = 0;
        for (int block = 0; block < blocks.Count; block++)
        {
            reassigned += ws.BlockReassigned[block];
            sum += ws.BlockObjective[block];
        }

        return (reassigned, sum / ws.N);
    }

    /// <summary>
    /// Keeps the assignments and refreshes each row's cosine to its own centroid and its runner-up,
    /// after the centroids moved since the last assignment pass.
    /// </summary>
    public static void ScoreAssigned(ClusteringWorkspace ws)
    {
        ws.Panel.Pack(ws.Centroids);
        ws.Blocks.ForEachBlock((block, worker) => ScoreAssignedBlock(ws, block, worker));
    }

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void AssignBlock(ClusteringWorkspace ws, int block, int worker)
    {
        int d = ws.D;
        int k = ws.K;
        int start = ws.Blocks.Start(block);
        int length = ws.Blocks.Length(block);
        Span<float> scores = ws.BlockScratch[worker].AsSpan(0, length * k);
        BlockScores.Compute(ws.Rows.AsSpan(start * d, length * d), ws.Panel, scores, k);

        int reassigned = 0;
        double sum = 0;
        for (int r = 0; r < length; r++)
        {
            ReadOnlySpan<float> rowScores = scores.Slice(r * k, k);
            int best = 0;
            float bestScore = rowScores[0];
            int second = 0;
            float secondScore = float.NegativeInfinity;
            for (int j = 1; j < k; j++)
            {
                float score = rowScores[j];
                if (score > bestScore)
                {
                    second = best;
                    secondScore = bestScore;
                    best = j;
                    bestScore = score;
                }
                else if (score > secondScore)
                {
                    second = j;
                    secondScore = score;
                }
            }

            if (k == 1)
            {
                secondScore = bestScore;
            }

            int i = start + r;
            if (ws.Assignments[i] != best)
            {
                reassigned++;
                ws.Assignments[i] = best;
            }

            ws.Similarities[i] = bestScore;
            ws.RunnerUpGroups[i] = second;
            ws.RunnerUpSimilarities[i] = secondScore;
            sum += bestScore;
        }

        ws.BlockReassigned[block] = reassigned;
        ws.BlockObjective[block] = sum;
    }

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void ScoreAssignedBlock(ClusteringWorkspace ws, int block, int worker)
    {
        int d = ws.D;
        int k = ws.K;
        int start = ws.Blocks.Start(block);
        int length = ws.Blocks.Length(block);
        Span<float> scores = ws.BlockScratch[worker].AsSpan(0, length * k);
        BlockScores.Compute(ws.Rows.AsSpan(start * d, length * d), ws.Panel, scores, k);

        for (int r = 0; r < length; r++)
        {
            ReadOnlySpan<float> rowScores = scores.Slice(r * k, k);
            int i = start + r;
            int own = ws.Assignments[i];
            int second = own;
            float secondScore = float.NegativeInfinity;
            for (int j = 0; j < k; j++)
            {
                if (j != own && rowScores[j] > secondScore)
                {
                    second = j;
                    secondScore = rowScores[j];
                }
            }

            ws.Similarities[i] = rowScores[own];
            ws.RunnerUpGroups[i] = second;
            ws.RunnerUpSimilarities[i] = k == 1 ? rowScores[own] : secondScore;
        }
    }
}
