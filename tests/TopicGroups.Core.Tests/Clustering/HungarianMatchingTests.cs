using TopicGroups.Core.Clustering;

namespace TopicGroups.Core.Tests.Clustering;

public sealed class HungarianMatchingTests
{
    /// <summary>Every way to pair rows with distinct columns, by enumeration: the definition the method must meet.</summary>
    private static double BruteForceBest(double[] weights, int rows, int columns)
    {
        double best = double.NegativeInfinity;
        int pairs = Math.Min(rows, columns);
        var usedRows = new bool[rows];
        var usedColumns = new bool[columns];

        // Choose, for each of the first `pairs` slots, a distinct row (when rows > columns) and column.
        void Search(int column, int placed, double total)
        {
            if (placed == pairs)
            {
                best = Math.Max(best, total);
                return;
            }

            if (column == columns)
            {
                return;
            }

            // Column left unpaired (only possible when columns > rows).
            if (columns - column - 1 >= pairs - placed)
            {
                Search(column + 1, placed, total);
            }

            for (int row = 0; row < rows; row++)
            {
                if (!usedRows[row])
                {
                    usedRows[row] = true;
                    usedColumns[column] = true;
                    Search(column + 1, placed + 1, total + weights[row * columns + column]);
                    usedRows[row] = false;
                    usedColumns[column] = false;
                }
            }
        }

        Search(0, 0, 0);
        return best;
    }

    private static void AssertIsMatching(int[] columnOfRow, int rows, int columns)
    {
        Assert.Equal(rows, columnOfRow.Length);
        Assert.Equal(Math.Min(rows, columns), columnOfRow.Count(c => c >= 0));
        Assert.All(columnOfRow, c => Assert.InRange(c, -1, columns - 1));
        int[] used = columnOfRow.Where(c => c >= 0).ToArray();
        Assert.Equal(used.Length, used.Distinct().Count());
    }

    [Fact]
    public void Maximise_ScipyDocumentationExample_MinimumCostFive()
    {
        // Source: the example in SciPy's documentation of scipy.optimize.linear_sum_assignment (from memory):
        // cost [[4, 1, 3], [2, 0, 5], [3, 2, 2]] gives col_ind [1, 0, 2] and a total cost of 5. Minimising
        // cost is maximising its negative. The optimum is unique (the six permutations cost 6, 11, 5, 9, 7, 6).
        double[] cost = [4, 1, 3, 2, 0, 5, 3, 2, 2];
        double[] weights = cost.Select(c => -c).ToArray();

        int[] columnOfRow = HungarianMatching.Maximise(weights, 3, 3);

        Assert.Equal([1, 0, 2], columnOfRow);
        Assert.Equal(-5, HungarianMatching.TotalWeight(weights, 3, columnOfRow));
    }

    [Fact]
    public void Maximise_GreedyWouldFail_FindsBetterTotal()
    {
        // Common practice (no source): the greedy choice of the largest weight (0.9) forces 0.9 + 0.1 = 1.0,
        // while the optimum pairs 0.8 + 0.8 = 1.6. Centre matching meets exactly this when two themes drift.
        double[] weights = [0.9, 0.8, 0.8, 0.1];

        int[] columnOfRow = HungarianMatching.Maximise(weights, 2, 2);

        Assert.Equal([1, 0], columnOfRow);
    }

    public static TheoryData<int, int, int> Shapes()
    {
        var data = new TheoryData<int, int, int>();
        int seed = 1;
        foreach (var (rows, columns) in new[] { (1, 1), (2, 2), (3, 3), (4, 4), (5, 5), (6, 6), (7, 7), (2, 5), (5, 2), (3, 6), (6, 3), (1, 7), (7, 1), (4, 6), (6, 4) })
        {
            for (int repeat = 0; repeat < 4; repeat++)
            {
                data.Add(rows, columns, seed++);
            }
        }

        return data;
    }

    [Theory, MemberData(nameof(Shapes))]
    public void Maximise_RandomWeights_MatchesBruteForceOverAllPermutations(int rows, int columns, int seed)
    {
        var random = new Random(seed);
        // Half the inputs use few distinct values, so ties between optimal matchings are common.
        double[] weights = Enumerable.Range(0, rows * columns)
            .Select(_ => seed % 2 == 0 ? random.NextDouble() * 2 - 1 : random.Next(4))
            .ToArray();

        int[] columnOfRow = HungarianMatching.Maximise(weights, rows, columns);

        AssertIsMatching(columnOfRow, rows, columns);
        Assert.True(
            Math.Abs(BruteForceBest(weights, rows, columns) - HungarianMatching.TotalWeight(weights, columns, columnOfRow)) < 1e-9,
            $"seed {seed}: {rows} × {columns} total {HungarianMatching.TotalWeight(weights, columns, columnOfRow)} is not the optimum {BruteForceBest(weights, rows, columns)}");
    }

    [Fact]
    public void Maximise_EmptySide_NoPairs()
    {
        Assert.Equal([-1, -1], HungarianMatching.Maximise([], 2, 0));
        Assert.Empty(HungarianMatching.Maximise([], 0, 3));
    }

    [Fact]
    public void Maximise_LargeSquare_IsAPermutationAndBeatsIdentity()
    {
        // 300 × 300: a full permutation comes back, and its total is at least that of any fixed pairing.
        var random = new Random(7);
        int n = 300;
        double[] weights = Enumerable.Range(0, n * n).Select(_ => random.NextDouble()).ToArray();

        int[] columnOfRow = HungarianMatching.Maximise(weights, n, n);

        AssertIsMatching(columnOfRow, n, n);
        double identity = Enumerable.Range(0, n).Sum(i => weights[i * n + i]);
        Assert.True(HungarianMatching.TotalWeight(weights, n, columnOfRow) >= identity);
    }

    [Fact]
    public void Maximise_BadInput_ThrowsNamingTheProblem()
    {
        var shape = Assert.Throws<ArgumentException>(() => HungarianMatching.Maximise(new double[5], 2, 3));
        Assert.Contains("2 × 3", shape.Message);
        var nan = Assert.Throws<ArgumentException>(() => HungarianMatching.Maximise([1, double.NaN], 1, 2));
        Assert.Contains("weights[1]", nan.Message);
    }
}
