namespace TopicGroups.Core.Clustering;

/// <summary>
/// The assignment problem by the Hungarian method (Kuhn, 1955; Munkres, 1957): pair rows with columns, each
/// used at most once, so that the total weight of the pairs is as large as possible. Rectangular inputs pair
/// min(rows, columns) of them. This is the O(n² m) form with dual potentials and shortest augmenting paths
/// (Tomizawa, 1971; Edmonds &amp; Karp, 1972), the usual way the method is written today.
/// </summary>
internal static class HungarianMatching
{
    /// <summary>
    /// Maximises the total weight. weights: rows × columns, row-major, finite. Returns, for each row, its
    /// column, or -1 when rows &gt; columns and the row is left out. Ties go to the first optimum found, which
    /// depends only on the input, so runs repeat.
    /// </summary>
    /// <exception cref="ArgumentException">A shape does not match or a weight is not finite.</exception>
    public static int[] Maximise(ReadOnlySpan<double> weights, int rows, int columns)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(rows);
        ArgumentOutOfRangeException.ThrowIfNegative(columns);
        if (weights.Length != (long)rows * columns)
        {
            throw new ArgumentException(
                $"weights has {weights.Length} values; rows × columns = {rows} × {columns} = {(long)rows * columns}.", nameof(weights));
        }

        for (int i = 0; i < weights.Length; i++)
        {
            if (!double.IsFinite(weights[i]))
            {
                throw new ArgumentException($"weights[{i}] is {weights[i]}; every weight must be finite.", nameof(weights));
            }
        }

        var columnOfRow = new int[rows];
        Array.Fill(columnOfRow, -1);
        if (rows == 0 || columns == 0)
        {
            return columnOfRow;
        }

        // The solver needs at most as many rows as columns; otherwise it solves the transpose.
        if (rows <= columns)
        {
            int[] solved = MinimiseCost(weights, rows, columns, transposed: false);
            solved.CopyTo(columnOfRow, 0);
            return columnOfRow;
        }

        int[] rowOfColumn = MinimiseCost(weights, columns, rows, transposed: true);
        for (int column = 0; column < columns; column++)
        {
            columnOfRow[rowOfColumn[column]] = column;
        }

        return columnOfRow;
    }

    /// <summary>Total weight of a matching returned by <see cref="Maximise"/>.</summary>
    public static double TotalWeight(ReadOnlySpan<double> weights, int columns, ReadOnlySpan<int> columnOfRow)
    {
        double total = 0;
        for (int row = 0; row < columnOfRow.Length; row++)
        {
            if (columnOfRow[row] >= 0)
            {
                total += weights[row * columns + columnOfRow[row]];
            }
        }

        return total;
    }

    /// <summary>
    /// n ≤ m. Minimises Σ cost(i, match(i)) with cost = −weight; returns the column of each of the n rows.
    /// Potentials u (rows) and v (columns) keep cost(i, j) − u[i] − v[j] ≥ 0, with equality on matched pairs;
    /// each row is added by a Dijkstra-like search for the cheapest augmenting path in reduced costs.
    /// Arrays are 1-based with index 0 as the virtual start, as in the textbook statement.
    /// </summary>
    private static int[] MinimiseCost(ReadOnlySpan<double> weights, int n, int m, bool transposed)
    {
        double[] u = new double[n + 1];
        double[] v = new double[m + 1];
        int[] rowOfColumn = new int[m + 1];     // 0 = free
        int[] previousColumn = new int[m + 1];  // the path back to the start
        double[] minimumSlack = new double[m + 1];
        bool[] used = new bool[m + 1];

        for (int row = 1; row <= n; row++)
        {
            rowOfColumn[0] = row;
            int column0 = 0;
            Array.Fill(minimumSlack, double.PositiveInfinity);
            Array.Clear(used);
            do
            {
                used[column0] = true;
                int row0 = rowOfColumn[column0];
                double delta = double.PositiveInfinity;
                int column1 = 0;
                for (int column = 1; column <= m; column++)
                {
                    if (used[column])
                    {
                        continue;
                    }

                    double weight = transposed ? weights[(column - 1) * n + row0 - 1] : weights[(row0 - 1) * m + column - 1];
                    double slack = -weight - u[row0] - v[column];
                    if (slack < minimumSlack[column])
                    {
                        minimumSlack[column] = slack;
                        previousColumn[column] = column0;
                    }

                    if (minimumSlack[column] < delta)
                    {
                        delta = minimumSlack[column];
                        column1 = column;
                    }
                }

                for (int column = 0; column <= m; column++)
                {
                    if (used[column])
                    {
                        u[rowOfColumn[column]] += delta;
                        v[column] -= delta;
                    }
                    else
                    {
                        minimumSlack[column] -= delta;
                    }
                }

                column0 = column1;
            }
            while (rowOfColumn[column0] != 0);

            // Flip the augmenting path.
            do
            {
                int column1 = previousColumn[column0];
                rowOfColumn[column0] = rowOfColumn[column1];
                column0 = column1;
            }
            while (column0 != 0);
        }

        int[] columnOfRow = new int[n];
        for (int column = 1; column <= m; column++)
        {
            if (rowOfColumn[column] != 0)
            {
                columnOfRow[rowOfColumn[column] - 1] = column - 1;
            }
        }

        return columnOfRow;
    }
}
