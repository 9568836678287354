namespace TopicGroups.Core.Clustering;

/// <summary>
/// Splits rows into blocks of a fixed size (never one block per core) and runs a body per block on up to
/// <c>workerCount</c> threads. Every body writes only its own block's slots, and callers reduce per-block
/// partial results in block order, so results do not depend on the number of threads or on scheduling.
/// </summary>
internal sealed class RowBlocks
{
    /// <summary>Rows per block: 256 rows × 384 dimensions is 384 KiB of float32, a few blocks fit in L2.</summary>
    public const int BlockRows = 256;

    private int _nextItem;

    public RowBlocks(int rowCount, int workerCount)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(rowCount);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(workerCount);
        RowCount = rowCount;
        WorkerCount = workerCount;
        Count = (rowCount + BlockRows - 1) / BlockRows;
    }

    public int RowCount { get; }

    public int WorkerCount { get; }

    /// <summary>Number of blocks.</summary>
    public int Count { get; }

    public int Start(int block) => block * BlockRows;

    public int Length(int block) => Math.Min(BlockRows, RowCount - block * BlockRows);

    /// <summary>Runs <paramref name="body"/>(block, worker) for every block; worker &lt; WorkerCount indexes per-thread scratch.</summary>
    public void ForEachBlock(Action<int, int> body) => ForEach(Count, body);

    /// <summary>Runs <paramref name="body"/>(item, worker) for items 0..itemCount-1, each item exactly once.</summary>
    public void ForEach(int itemCount, Action<int, int> body)
    {
        int workers = Math.Min(WorkerCount, itemCount);
        if (workers <= 1)
        {
            for (int item = 0; item < itemCount; item++)
            {
                body(item, 0);
            }

            return;
        }

        _nextItem = -1;
        Parallel.For(0, workers, new ParallelOptions { MaxDegreeOfParallelism = workers }, worker =>
        {
            int item;
            while ((item = Interlocked.Increment(ref _nextItem)) < itemCount)
            {
                body(item, worker);
            }
        });
    }
}
