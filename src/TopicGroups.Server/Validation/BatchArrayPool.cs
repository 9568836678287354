namespace TopicGroups.Server.Validation;

/// <summary>
/// Keeps the embedding arrays of finished batches so that the next batch of a similar size is copied into memory
/// the process has already touched. A fresh array of 100,000 × 384 floats is 154 MB whose every page faults on
/// first write (about 37,500 faults, about 0.45 s on a 2-core VM); a kept one costs nothing. An array is lent to
/// one batch at a time: <see cref="Rent"/> removes it from the pool, <see cref="Return"/> puts it back once nothing
/// reads it any more. Its values past the batch's rows are left over from an earlier batch and are never read:
/// the matrix over it has the batch's own row count (EmbeddingMatrix.OverPrefix).
/// Kept arrays never add to what the running groupings need: a batch that finds none that fits gets a new array,
/// and the pool lets go of kept arrays of at least that size (oldest first), so kept and lent arrays together hold
/// no more than before the batch, or no more than the lent ones alone.
/// </summary>
/// <remarks>Public, unlike most of the server, so that the server tests (which see only public types) can check
/// what it lends; it holds no transport types.</remarks>
public sealed class BatchArrayPool
{
    /// <summary>Arrays smaller than this (1 MiB) are neither kept nor lent: they are cheap to allocate.</summary>
    public const int MinKeptValues = 256 * 1024;

    /// <summary>A kept array is lent only to a batch that fills at least this share of it (1 / 2).</summary>
    private const int MaxLengthOverNeed = 2;

    private readonly long _maxKeptBytes;
    private readonly object _gate = new();
    private readonly List<float[]> _kept = [];   // oldest first
    private long _keptBytes;

    /// <param name="maxKeptBytes">Most bytes of idle arrays kept; 0 keeps none (every batch gets a fresh array).</param>
    public BatchArrayPool(long maxKeptBytes)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(maxKeptBytes);
        _maxKeptBytes = maxKeptBytes;
    }

    /// <summary>Bytes of idle arrays kept now.</summary>
    public long KeptBytes
    {
        get
        {
            lock (_gate)
            {
                return _keptBytes;
            }
        }
    }

    /// <summary>Idle arrays kept now.</summary>
    public int KeptCount
    {
        get
        {
            lock (_gate)
            {
                return _kept.Count;
            }
        }
    }

    /// <summary>
    /// An array of at least <paramref name="values"/> entries that no one else holds until it is returned: the
    /// smallest kept one that fits (and is at most twice the need), else a new one, for which the oldest kept arrays
    /// are let go until at least as many bytes went. Its contents are undefined.
    /// </summary>
    public float[] Rent(int values)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(values);
        if (values >= MinKeptValues && _maxKeptBytes > 0)
        {
            lock (_gate)
            {
                int best = -1;
                for (int i = 0; i < _kept.Count; i++)
                {
                    long length = _kept[i].Length;
                    if (length >= values && length <= (long)values * MaxLengthOverNeed && (best < 0 || length < _kept[best].Length))
                    {
                        best = i;
                    }
                }

                if (best >= 0)
                {
                    float[] array = _kept[best];
                    _kept.RemoveAt(best);
                    _keptBytes -= BytesOf(array);
                    return array;
                }

                for (long freed = 0; freed < (long)values * sizeof(float) && _kept.Count > 0;)
                {
                    freed += BytesOf(_kept[0]);
                    _keptBytes -= BytesOf(_kept[0]);
                    _kept.RemoveAt(0);
                }
            }
        }

        // Uninitialised: every value the batch uses is written before it is read, so zeroing would be a wasted pass.
        return GC.AllocateUninitializedArray<float>(values);
    }

    /// <summary>
    /// Takes back an array lent by <see cref="Rent"/> whose batch is over: its grouping has stopped and its reply is
    /// built. Kept while the pool has room (the oldest kept arrays make room for it), else left to the collector.
    /// </summary>
    /// <exception cref="InvalidOperationException">The array is already in the pool (returned twice).</exception>
    public void Return(float[] array)
    {
        ArgumentNullException.ThrowIfNull(array);
        long bytes = BytesOf(array);
        if (array.Length < MinKeptValues || bytes > _maxKeptBytes)
        {
            return;
        }

        lock (_gate)
        {
            foreach (float[] kept in _kept)
            {
                if (ReferenceEquals(kept, array))
                {
                    throw new InvalidOperationException("This batch array was returned twice; two batches would then share it.");
                }
            }

            while (_keptBytes + bytes > _maxKeptBytes)
            {
                _keptBytes -= BytesOf(_kept[0]);
                _kept.RemoveAt(0);
            }

            _kept.Add(array);
            _keptBytes += bytes;
        }
    }

    private static long BytesOf(float[] array) => (long)array.Length * sizeof(float);
}
