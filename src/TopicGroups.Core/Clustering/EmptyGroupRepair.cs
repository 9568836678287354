namespace TopicGroups.Core.Clustering;

/// <summary>
/// Gives every empty group a member: the worst-fitting row (lowest cosine to its own centroid) among
/// groups that keep at least one member, moved to the empty group, whose centroid becomes that row.
/// The objective cannot drop: the moved row now scores 1, and its old group's remaining members are
/// re-centred on their own mean, which is optimal for them.
/// </summary>
internal static class EmptyGroupRepair
{
    /// <summary>Repairs empty groups in ascending order; returns how many rows were moved. Ties go to the lower row index.</summary>
    [System.Runtime.CompilerServices.MethodImpl(System.Runtime.CompilerServices.MethodImplOptions.AggressiveOptimization)]
    public static int Repair(ClusteringWorkspace ws)
    {
        int[] sizes = ws.GroupSizes;
        int moved = 0;
        for (int empty = 0; empty < ws.K; empty++)
        {
            if (sizes[empty] != 0)
            {
                continue;
            }

            // k ≤ n, so while a group is empty some other group has two or more members.
            int worst = -1;
            float worstSimilarity = float.PositiveInfinity;
            for (int i = 0; i < ws.N; i++)
            {
                if (sizes[ws.Assignments[i]] >= 2 && (worst < 0 || ws.Similarities[i] < worstSimilarity))
                {
                    worst = i;
                    worstSimilarity = ws.Similarities[i];
                }
            }

            sizes[ws.Assignments[worst]]--;
            sizes[empty] = 1;
            ws.Assignments[worst] = empty;
            ws.Similarities[worst] = 1f;
            if (ws.Bounds is not null)
            {
                // Its bounds and near centroids were about its old group: make the next pass score it in full.
                ws.Bounds.OtherUpper[worst] = float.PositiveInfinity;
                ws.Bounds.FarUpper[worst] = float.PositiveInfinity;
            }

            moved++;
        }

        return moved;
    }
}
