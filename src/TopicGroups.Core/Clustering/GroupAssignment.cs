using System.Numerics;
using System.Runtime.CompilerServices;
using System.Runtime.InteropServices;
using System.Runtime.Intrinsics;
using TopicGroups.Core.Vectors;

namespace TopicGroups.Core.Clustering;

/// <summary>The assignment step: each row goes to its most similar centroid.</summary>
/// <remarks>
/// Pruning (when the workspace has <see cref="AssignmentBounds"/>): Hamerly's bounds (Hamerly, 2010) in the
/// cosine form of Schubert, Lang &amp; Feher (2021, "Accelerating spherical k-means"). Each row keeps a lower
/// bound l on its cosine to its own centroid, an upper bound on its cosine to each of its few near centroids
/// (Elkan's per-centroid bounds, Elkan 2003, kept for those only) and one upper bound on all the others. When
/// centroid c moves by the angle θ_c, angles obey the triangle inequality on the sphere, so l becomes
/// cos(arccos l + θ_own) and an upper bound u becomes cos(max(0, arccos u − θ)): θ_c for a near centroid, the
/// largest move for all the others. A pass then settles each row by the cheapest test that proves its group:
/// (1) bounds alone (a few floats per row; late in a run most centroids stand still, so the near bounds stay tight);
/// (2) bounds plus exact scores against the few "jumpers", centroids that moved far more than the rest, so that
///     one big jump does not loosen every row's bound (scored for the undecided rows in one narrow panel);
/// (3) exact cosines to the row's near centroids (its most similar ones at its last full scoring) against a
///     bound on all the others;
/// (4) the blocked product against every centroid.
/// Every test keeps a slack of <see cref="RoundingMargin"/> between the two sides, which covers float32 rounding
/// of the scores, so a pruned pass makes exactly the decisions of a full pass: the same assignments, bit for
/// bit, whichever test settled a row; only the time differs.
/// </remarks>
internal static class GroupAssignment
{
    /// <summary>
    /// Assigns every row to the argmax-cosine centroid (Dhillon &amp; Modha, 2001, §3); ties go to the lower
    /// group index so runs repeat. Rows scored in full also get their cosine and runner-up recorded; rows settled
    /// otherwise keep estimates (the final <see cref="ScoreAssigned"/> makes them exact). Returns the number of
    /// rows whose group changed and the number scored against every centroid (n when nothing was pruned).
    /// </summary>
    public static (int Reassigned, int Scored) AssignAll(ClusteringWorkspace ws)
    {
        RowBlocks blocks = ws.Blocks;
        AssignmentBounds? bounds = ws.Bounds;
        ws.Panel.Pack(ws.Centroids);
        bool pruned = bounds is { Valid: true } && ws.K > 1;
        if (pruned)
        {
            MeasureMovements(ws, bounds!);

            // Early passes, while most centroids still move far, settle too few rows to repay the tests: score in full
            // (which also refreshes every row's bounds) until the median move is small.
            pruned = bounds!.AlwaysPrune || bounds.Angle[bounds.ByAngle[ws.K / 2]] <= PruneBelowMedianMove;
        }

        if (pruned)
        {
            blocks.ForEachBlock((block, worker) => AssignBlockPruned(ws, bounds!, block, worker));
        }
        else
        {
            blocks.ForEachBlock((block, worker) => AssignBlock(ws, block, worker));
        }

        if (bounds is not null)
        {
            ws.Centroids.CopyTo(bounds.PreviousCentroids, 0);
            bounds.Valid = true;
        }

        int reassigned = 0;
        int scored = 0;
        for (int block = 0; block < blocks.Count; block++)
        {
            reassigned += ws.BlockReassigned[block];
            scored += pruned ? bounds!.Scored[block] : blocks.Length(block);
        }

        return (reassigned, scored);
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

    /// <summary>
    /// Radians: a pass prunes only when the median centroid moved less than this since the last pass. Measured on
    /// the peers' M data (100k × 384, k = 100, two threads, `bench … -- profile`): pruned passes with median moves of
    /// 0.057, 0.031 and 0.019 took 124, 81 and 89 ms against 81–92 ms for a full pass; at 0.014 they took 72 ms and
    /// from 0.009 down 28–46 ms.
    /// </summary>
    private const double PruneBelowMedianMove = 0.015;

    /// <summary>
    /// Radians: jumpers are scored only when some centroid moved more than this. Below it every bound moves so little
    /// that the near test, straight from the row, settles what the bounds alone cannot, without copying the undecided
    /// rows for a jumper product. Measured at M (`bench … -- study M_X.npy 100 20 2 2 greedy-prune`, three interleaved
    /// runs): median CPU 1.81 s at 0.02 against 1.87 s at 0.002 (jumpers in every pass, as before).
    /// </summary>
    private const double JumperMinimumMove = 0.02;

    /// <summary>
    /// Slack kept between the two sides of every pruning test, for dimension d: 4 (d + 2) · 2⁻²⁴. A float32 score
    /// of unit vectors is within d · 2⁻²⁴ of the exact cosine (the error bound of a d-term FMA chain, Higham,
    /// Accuracy and Stability of Numerical Algorithms, 2002, §3.1, from memory; +2 for centroids that are unit
    /// only to float32 rounding). Bounds come from such scores and the full pass compares such scores, so a gap
    /// of four such errors guarantees the full pass would decide the same.
    /// </summary>
    public static float RoundingMargin(int d) => 4f * (d + 2) / (1 << 24);

    /// <summary>
    /// The angle each centroid moved since the last pass, as 2·asin(‖a − b‖ / 2) of the two normalised
    /// directions (stable for small angles, where arccos of a dot product is not); then the jumpers: the
    /// 16 centroids that moved most (none when no centroid moved more than 0.002 radians).
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void MeasureMovements(ClusteringWorkspace ws, AssignmentBounds bounds)
    {
        int d = ws.D;
        int k = ws.K;
        for (int c = 0; c < k; c++)
        {
            ReadOnlySpan<float> before = bounds.PreviousCentroids.AsSpan(c * d, d);
            ReadOnlySpan<float> after = ws.Centroids.AsSpan(c * d, d);
            double beforeNorm = 0;
            double afterNorm = 0;
            for (int p = 0; p < d; p++)
            {
                beforeNorm += (double)before[p] * before[p];
                afterNorm += (double)after[p] * after[p];
            }

            beforeNorm = Math.Sqrt(beforeNorm);
            afterNorm = Math.Sqrt(afterNorm);
            double gap = 0;
            for (int p = 0; p < d; p++)
            {
                double difference = before[p] / beforeNorm - after[p] / afterNorm;
                gap += difference * difference;
            }

            double angle = 2 * Math.Asin(Math.Min(1.0, Math.Sqrt(gap) / 2));
            bounds.Angle[c] = angle;
            bounds.Cos[c] = Math.Cos(angle);
            bounds.Sin[c] = Math.Sin(angle);
            bounds.ByAngle[c] = c;
            bounds.SortKeys[c] = -angle;
        }

        Array.Sort(bounds.SortKeys, bounds.ByAngle);   // largest move first; ties in any fixed order
        int[] order = bounds.ByAngle;
        bounds.AllLargest = Largest(bounds, order, 0);

        // The jumper panel costs the same for 1 or 16 columns, so take the 16 largest moves (when anything moved far).
        int jumpers = bounds.Angle[order[0]] > JumperMinimumMove ? Math.Min(k, AssignmentBounds.MaxJumpers) : 0;

        Array.Fill(bounds.JumperSlot, -1);
        bounds.JumperCount = jumpers;
        bounds.JumperValues.AsSpan().Clear();
        for (int slot = 0; slot < jumpers; slot++)
        {
            int c = order[slot];
            bounds.Jumpers[slot] = c;
            bounds.JumperSlot[c] = slot;
            ws.Centroids.AsSpan(c * d, d).CopyTo(bounds.JumperValues.AsSpan(slot * d, d));
        }

        if (jumpers > 0)
        {
            bounds.JumperPanel.Pack(bounds.JumperValues);
        }

        bounds.StableLargest = Largest(bounds, order, jumpers);
    }

    /// <summary>The largest and second-largest move among order[from..].</summary>
    private static (int, double, double, double, double) Largest(AssignmentBounds bounds, int[] order, int from)
    {
        int first = from < order.Length ? order[from] : -1;
        double firstAngle = first >= 0 ? bounds.Angle[first] : 0;
        double secondAngle = from + 1 < order.Length ? bounds.Angle[order[from + 1]] : 0;
        return (first, Math.Cos(firstAngle), Math.Sin(firstAngle), Math.Cos(secondAngle), Math.Sin(secondAngle));
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
        for (int r = 0; r < length; r++)
        {
            reassigned += Place(ws, start + r, scores.Slice(r * k, k)) ? 1 : 0;
        }

        ws.BlockReassigned[block] = reassigned;
    }

    /// <summary>One block through tests (1) to (4) of the class remarks.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static void AssignBlockPruned(ClusteringWorkspace ws, AssignmentBounds bounds, int block, int worker)
    {
        const int nearCount = AssignmentBounds.NearCount;
        int d = ws.D;
        int k = ws.K;
        int start = ws.Blocks.Start(block);
        int length = ws.Blocks.Length(block);
        float margin = RoundingMargin(d);
        float[] lower = bounds.OwnLower;
        float[] upper = bounds.OtherUpper;
        float[] far = bounds.FarUpper;
        int[] near = bounds.Near;
        float[] nearUpper = bounds.NearUpper;
        double[] moveCos = bounds.Cos;
        double[] moveSin = bounds.Sin;
        int[] assignments = ws.Assignments;
        float[] gathered = bounds.GatherRows[worker];
        int[] indices = bounds.GatherIndices[worker];
        var all = bounds.AllLargest;
        Span<float> nearMoved = stackalloc float[nearCount];

        bool withJumpers = bounds.JumperCount > 0;
        int reassigned = 0;
        int settledByNear = 0;

        // (1) Bounds alone: the own centroid and each near one by its own move, all others by the largest move.
        int gatheredCount = 0;
        for (int i = start; i < start + length; i++)
        {
            int own = assignments[i];
            int nearBase = i * nearCount;
            float l = (float)MovedLowerBound(lower[i], moveCos[own], moveSin[own]);
            float farMoved = own == all.Index
                ? (float)MovedUpperBound(far[i], all.SecondCos, all.SecondSin)
                : (float)MovedUpperBound(far[i], all.Cos, all.Sin);
            float u = farMoved;
            for (int t = 0; t < nearCount; t++)
            {
                int c = near[nearBase + t];
                if (c < 0)
                {
                    break;
                }

                if (c != own)
                {
                    nearMoved[t] = (float)MovedUpperBound(nearUpper[nearBase + t], moveCos[c], moveSin[c]);
                    u = MathF.Max(u, nearMoved[t]);
                }
            }

            if (l - u > margin)
            {
                lower[i] = l;
                upper[i] = u;
                far[i] = farMoved;
                for (int t = 0; t < nearCount && near[nearBase + t] >= 0; t++)
                {
                    if (near[nearBase + t] != own)
                    {
                        nearUpper[nearBase + t] = nearMoved[t];
                    }
                }

                continue;
            }

            // No jumpers (every centroid moved little): the near test straight from the row, no copy; only
            // rows it cannot settle are gathered, for the full product.
            if (!withJumpers)
            {
                if (SettleByNear(ws, bounds, i, ws.Row(i), own, farMoved, [], margin, ref reassigned))
                {
                    settledByNear++;
                    continue;
                }
            }

            if (!withJumpers)
            {
                ws.Row(i).CopyTo(gathered.AsSpan(gatheredCount * d, d));
            }

            indices[gatheredCount++] = i;
        }

        // With jumpers, the undecided rows are scored against them in one product: when no row of the block was
        // settled (early passes) the block's own rows serve, otherwise the undecided ones are copied together.
        bool inPlace = withJumpers && gatheredCount == length;
        if (withJumpers && !inPlace)
        {
            for (int g = 0; g < gatheredCount; g++)
            {
                ws.Row(indices[g]).CopyTo(gathered.AsSpan(g * d, d));
            }
        }

        ReadOnlySpan<float> undecided = inPlace ? ws.Rows.AsSpan(start * d, length * d) : gathered.AsSpan(0, gatheredCount * d);

        int jumpers = bounds.JumperCount;
        float[] jumperScores = bounds.JumperScores[worker];
        if (jumpers > 0 && gatheredCount > 0)
        {
            BlockScores.Compute(undecided, bounds.JumperPanel, jumperScores, AssignmentBounds.MaxJumpers);
        }

        var stable = bounds.StableLargest;
        int settledByJumpers = 0;
        int fullCount = withJumpers ? 0 : gatheredCount;
        Span<int> nearHere = stackalloc int[nearCount];
        for (int g = 0; withJumpers && g < gatheredCount; g++)
        {
            int i = indices[g];
            int own = assignments[i];
            int nearBase = i * nearCount;
            ReadOnlySpan<float> jumperRow = jumperScores.AsSpan(g * AssignmentBounds.MaxJumpers, jumpers);

            // (2) Stable centroids by their (smaller) moves, jumpers by exact scores.
            float farStable = (float)MovedUpperBound(far[i], stable.Cos, stable.Sin);
            int ownSlot = bounds.JumperSlot[own];
            near.AsSpan(nearBase, nearCount).CopyTo(nearHere);
            float farJumperMax = float.NegativeInfinity;
            for (int slot = 0; slot < jumpers; slot++)
            {
                if (!IsNear(nearHere, bounds.Jumpers[slot]))
                {
                    farJumperMax = MathF.Max(farJumperMax, jumperRow[slot]);
                }
            }

            float farNow = MathF.Max(farStable, farJumperMax);
            if (jumpers > 0)
            {
                float l = ownSlot >= 0 ? jumperRow[ownSlot] : (float)MovedLowerBound(lower[i], moveCos[own], moveSin[own]);
                float u = farNow;
                for (int t = 0; t < nearCount && nearHere[t] >= 0; t++)
                {
                    int c = nearHere[t];
                    if (c != own)
                    {
                        int slot = bounds.JumperSlot[c];
                        nearMoved[t] = slot >= 0 ? jumperRow[slot] : (float)MovedUpperBound(nearUpper[nearBase + t], moveCos[c], moveSin[c]);
                        u = MathF.Max(u, nearMoved[t]);
                    }
                }

                if (l - u > margin)
                {
                    lower[i] = l;
                    upper[i] = u;
                    far[i] = farNow;
                    for (int t = 0; t < nearCount && nearHere[t] >= 0; t++)
                    {
                        if (nearHere[t] != own)
                        {
                            nearUpper[nearBase + t] = nearMoved[t];
                        }
                    }

                    settledByJumpers++;
                    continue;
                }
            }

            // (3) Exact cosines to the near centroids (own among them); jumpers outside the list by their exact scores.
            if (SettleByNear(ws, bounds, i, undecided.Slice(g * d, d), own, farNow, jumperRow, margin, ref reassigned))
            {
                settledByNear++;
                continue;
            }

            // (4) Score in full: compact the undecided rows to the front of the gather buffer.
            if (inPlace || fullCount != g)
            {
                undecided.Slice(g * d, d).CopyTo(gathered.AsSpan(fullCount * d, d));
                indices[fullCount] = i;
            }

            fullCount++;
        }

        if (fullCount > 0)
        {
            Span<float> scores = ws.BlockScratch[worker].AsSpan(0, fullCount * k);
            BlockScores.Compute(gathered.AsSpan(0, fullCount * d), ws.Panel, scores, k);
            for (int f = 0; f < fullCount; f++)
            {
                reassigned += Place(ws, indices[f], scores.Slice(f * k, k)) ? 1 : 0;
            }
        }

        ws.BlockReassigned[block] = reassigned;
        bounds.Skipped[block] = length - gatheredCount - (withJumpers ? 0 : settledByNear);
        bounds.SettledByJumpers[block] = settledByJumpers;
        bounds.SettledByNear[block] = settledByNear;
        bounds.Scored[block] = fullCount;
    }

    /// <summary>
    /// Test (3) for row i: exact cosines to its near centroids (jumpers among them by their scores in jumperRow)
    /// against <paramref name="farNow"/>, a bound on every other centroid. When the winner clears the runner-up and
    /// that bound by the margin, records the row (group, cosines, bounds) and returns true.
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static bool SettleByNear(
        ClusteringWorkspace ws, AssignmentBounds bounds, int i, ReadOnlySpan<float> row, int own, float farNow, ReadOnlySpan<float> jumperRow, float margin, ref int reassigned)
    {
        const int nearCount = AssignmentBounds.NearCount;
        int d = ws.D;
        int nearBase = i * nearCount;
        int[] near = bounds.Near;
        Span<float> nearScores = stackalloc float[nearCount];
        int best = -1;
        float bestScore = float.NegativeInfinity;
        int second = -1;
        float secondScore = float.NegativeInfinity;
        int t = 0;
        for (; t < nearCount && near[nearBase + t] >= 0; t++)
        {
            int c = near[nearBase + t];
            int slot = bounds.JumperSlot[c];
            float score = slot >= 0 ? jumperRow[slot] : DotProduct.Dot(row, ws.Centroids.AsSpan(c * d, d));
            nearScores[t] = score;
            Rank(c, score, ref best, ref bestScore, ref second, ref secondScore);
        }

        // The winner must beat the runner-up among the near ones and the bound on the rest.
        float rivals = MathF.Max(secondScore, farNow);
        if (best < 0 || !(bestScore - rivals > margin))
        {
            return false;
        }

        if (best != own)
        {
            ws.Assignments[i] = best;
            reassigned++;
        }

        bounds.OwnLower[i] = bestScore;
        bounds.OtherUpper[i] = rivals;
        bounds.FarUpper[i] = farNow;
        nearScores[..t].CopyTo(bounds.NearUpper.AsSpan(nearBase, t));
        ws.Similarities[i] = bestScore;
        ws.RunnerUpGroups[i] = second;
        ws.RunnerUpSimilarities[i] = secondScore;
        return true;
    }

    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static void Rank(int c, float score, ref int best, ref float bestScore, ref int second, ref float secondScore)
    {
        if (score > bestScore)
        {
            second = best;
            secondScore = bestScore;
            best = c;
            bestScore = score;
        }
        else if (score > secondScore)
        {
            second = c;
            secondScore = score;
        }
    }

    /// <summary>cos(arccos l + θ): the least cosine to a centroid that moved by θ, clamped at −1 past the antipode.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static double MovedLowerBound(double l, double cos, double sin)
    {
        if (sin == 0)
        {
            return l;
        }

        if (cos <= -l)
        {
            return -1;
        }

        return l * cos - Math.Sqrt(Math.Max(0, 1 - l * l)) * sin;
    }

    /// <summary>cos(max(0, arccos u − θ)): the largest cosine to centroids that moved by at most θ.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static double MovedUpperBound(double u, double cos, double sin)
    {
        if (sin == 0)
        {
            return u;
        }

        if (u >= cos)
        {
            return 1;
        }

        return u * cos + Math.Sqrt(Math.Max(0, 1 - u * u)) * sin;
    }

    /// <summary>Argmax and runner-up of one row's scores; records them (and, when pruning, the bounds). True when the group changed.</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static bool Place(ClusteringWorkspace ws, int i, ReadOnlySpan<float> rowScores)
    {
        if (ws.Bounds is not null)
        {
            return PlaceTracked(ws, ws.Bounds, i, rowScores);
        }

        int best = 0;
        float bestScore = rowScores[0];
        int second = 0;
        float secondScore = float.NegativeInfinity;
        int j = 1;
        if (Vector512.IsHardwareAccelerated)
        {
            // Only scores above the runner-up can change anything, and the runner-up only rises: skip 16 at a time.
            ref float first = ref MemoryMarshal.GetReference(rowScores);
            for (; j + Vector512<float>.Count <= rowScores.Length; j += Vector512<float>.Count)
            {
                ulong above = Vector512.GreaterThan(Vector512.LoadUnsafe(ref first, (nuint)j), Vector512.Create(secondScore)).ExtractMostSignificantBits();
                for (; above != 0; above &= above - 1)
                {
                    int c = j + BitOperations.TrailingZeroCount(above);
                    Rank(c, rowScores[c], ref best, ref bestScore, ref second, ref secondScore);
                }
            }
        }

        for (; j < rowScores.Length; j++)
        {
            Rank(j, rowScores[j], ref best, ref bestScore, ref second, ref secondScore);
        }

        if (rowScores.Length == 1)
        {
            secondScore = bestScore;
        }

        return Record(ws, i, best, bestScore, second, secondScore);
    }

    /// <summary>
    /// Like <see cref="Place"/>, and also keeps the row's near centroids (its top NearCount, ties to the lower
    /// index, so the first is the argmax) and the next score as the bound on all the others.
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static bool PlaceTracked(ClusteringWorkspace ws, AssignmentBounds bounds, int i, ReadOnlySpan<float> rowScores)
    {
        const int near = AssignmentBounds.NearCount;
        const int tracked = near + 1;
        Span<int> top = stackalloc int[tracked];
        Span<float> topScores = stackalloc float[tracked];
        top.Fill(-1);
        topScores.Fill(float.NegativeInfinity);
        int j = 0;
        if (Vector512.IsHardwareAccelerated && tracked <= Vector256<float>.Count)
        {
            TopByLanes(rowScores, top, topScores);
            j = rowScores.Length;
        }
        else if (Vector512.IsHardwareAccelerated)
        {
            // Only scores above the last kept one enter, and that one only rises: skip 16 scores at a time.
            ref float first = ref MemoryMarshal.GetReference(rowScores);
            for (; j + Vector512<float>.Count <= rowScores.Length; j += Vector512<float>.Count)
            {
                ulong above = Vector512.GreaterThan(Vector512.LoadUnsafe(ref first, (nuint)j), Vector512.Create(topScores[tracked - 1])).ExtractMostSignificantBits();
                for (; above != 0; above &= above - 1)
                {
                    int c = j + BitOperations.TrailingZeroCount(above);
                    KeepIfTop(top, topScores, c, rowScores[c]);
                }
            }
        }

        for (; j < rowScores.Length; j++)
        {
            KeepIfTop(top, topScores, j, rowScores[j]);
        }

        top[..near].CopyTo(bounds.Near.AsSpan(i * near, near));
        topScores[..near].CopyTo(bounds.NearUpper.AsSpan(i * near, near));
        bounds.FarUpper[i] = top[near] >= 0 ? topScores[near] : -1f;
        bounds.OwnLower[i] = topScores[0];
        bounds.OtherUpper[i] = rowScores.Length == 1 ? -1f : topScores[1];
        return rowScores.Length == 1
            ? Record(ws, i, top[0], topScores[0], top[0], topScores[0])
            : Record(ws, i, top[0], topScores[0], top[1], topScores[1]);
    }

    /// <summary>True when c is in the near list (a plain loop: the generic Contains would run unoptimised at first).</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static bool IsNear(ReadOnlySpan<int> near, int c)
    {
        foreach (int entry in near)
        {
            if (entry == c)
            {
                return true;
            }
        }

        return false;
    }

    /// <summary>
    /// The descending top entries of rowScores (top.Length ≤ 8 of them, ties to the lower index) as <see cref="KeepIfTop"/>
    /// over every score in order would leave them, without its branches: the list lives in the lanes of one vector and an
    /// insertion is two compares and selects against the list and the list shifted by one lane. Scores are first skipped
    /// 16 at a time when none beats the last entry (which only rises).
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    internal static void TopByLanes(ReadOnlySpan<float> rowScores, Span<int> top, Span<float> topScores)
    {
        int last = top.Length - 1;
        Vector256<float> kept = Vector256.Create(float.NegativeInfinity);
        Vector256<int> keptIndex = Vector256.Create(-1);
        Vector256<int> down = Vector256.Create(0, 0, 1, 2, 3, 4, 5, 6);
        Vector256<int> firstLane = Vector256.Create(-1, 0, 0, 0, 0, 0, 0, 0);
        Vector256<float> above = Vector256.Create(float.PositiveInfinity);
        float threshold = float.NegativeInfinity;
        ref float first = ref MemoryMarshal.GetReference(rowScores);
        int j = 0;
        for (; j < rowScores.Length; j += Vector512<float>.Count)
        {
            ulong candidates = j + Vector512<float>.Count <= rowScores.Length
                ? Vector512.GreaterThan(Vector512.LoadUnsafe(ref first, (nuint)j), Vector512.Create(threshold)).ExtractMostSignificantBits()
                : (1UL << (rowScores.Length - j)) - 1;
            for (; candidates != 0; candidates &= candidates - 1)
            {
                int c = j + BitOperations.TrailingZeroCount(candidates);
                float score = rowScores[c];
                if (!(score > threshold))
                {
                    continue;
                }

                // Lane s takes lane s − 1 when the score beats that one (the entries slide down), else the score
                // when it beats lane s, else keeps its entry.
                Vector256<float> scoreLanes = Vector256.Create(score);
                Vector256<float> shifted = Vector256.ConditionalSelect(firstLane.AsSingle(), above, Vector256.Shuffle(kept, down));
                Vector256<int> shiftedIndex = Vector256.Shuffle(keptIndex, down);
                Vector256<float> slides = Vector256.GreaterThan(scoreLanes, shifted);
                Vector256<float> lands = Vector256.GreaterThan(scoreLanes, kept);
                kept = Vector256.ConditionalSelect(slides, shifted, Vector256.ConditionalSelect(lands, scoreLanes, kept));
                keptIndex = Vector256.ConditionalSelect(slides.AsInt32(), shiftedIndex, Vector256.ConditionalSelect(lands.AsInt32(), Vector256.Create(c), keptIndex));
                threshold = kept.GetElement(last);
            }
        }

        for (int slot = 0; slot <= last; slot++)
        {
            topScores[slot] = kept.GetElement(slot);
            top[slot] = keptIndex.GetElement(slot);
        }
    }

    /// <summary>Inserts centroid c into the descending list top/topScores when it beats the last entry (ties keep the earlier index).</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    internal static void KeepIfTop(Span<int> top, Span<float> topScores, int c, float score)
    {
        int slot = topScores.Length - 1;
        if (!(score > topScores[slot]))
        {
            return;
        }

        while (slot > 0 && score > topScores[slot - 1])
        {
            top[slot] = top[slot - 1];
            topScores[slot] = topScores[slot - 1];
            slot--;
        }

        top[slot] = c;
        topScores[slot] = score;
    }

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static bool Record(ClusteringWorkspace ws, int i, int best, float bestScore, int second, float secondScore)
    {
        bool changed = ws.Assignments[i] != best;
        ws.Assignments[i] = best;
        ws.Similarities[i] = bestScore;
        ws.RunnerUpGroups[i] = second;
        ws.RunnerUpSimilarities[i] = secondScore;
        return changed;
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
            int j = 0;
            if (Vector512.IsHardwareAccelerated)
            {
                ref float first = ref MemoryMarshal.GetReference(rowScores);
                for (; j + Vector512<float>.Count <= k; j += Vector512<float>.Count)
                {
                    ulong above = Vector512.GreaterThan(Vector512.LoadUnsafe(ref first, (nuint)j), Vector512.Create(secondScore)).ExtractMostSignificantBits();
                    for (; above != 0; above &= above - 1)
                    {
                        int c = j + BitOperations.TrailingZeroCount(above);
                        if (c != own && rowScores[c] > secondScore)
                        {
                            second = c;
                            secondScore = rowScores[c];
                        }
                    }
                }
            }

            for (; j < k; j++)
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
