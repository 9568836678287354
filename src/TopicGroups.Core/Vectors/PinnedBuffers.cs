namespace TopicGroups.Core.Vectors;

/// <summary>
/// Pinned float32 buffers kept between fits, so that the packed panels of one fit (the seeding pool above all:
/// 128 × k × d floats, 20 MB at 100,000 × 384, k = 100) reuse memory an earlier fit already touched. Fresh memory
/// is dear: every 4 KiB page costs a fault on first touch, about 12 µs on the virtual machines measured here, so a
/// 20 MB panel took 60 ms to fill the first time and 5 ms the next. The server groups batch after batch, and one
/// grouping runs many small fits (restarts, candidate group counts, the split test of every group): each rents
/// here and gives back when done.
/// </summary>
/// <remarks>
/// A rented buffer holds whatever its last user wrote: callers write every value they read. Idle buffers are
/// kept up to a byte limit (<see cref="DefaultRetainedBytes"/> for the shared instance); past it the smallest
/// are left to the GC.
/// </remarks>
internal sealed class PinnedBuffers
{
    /// <summary>Idle bytes the shared instance keeps for reuse, all buffers together.</summary>
    public const long DefaultRetainedBytes = 256L * 1024 * 1024;

    /// <summary>Idle buffers kept, whatever their size: the search for a fit stays a short walk.</summary>
    public const int RetainedBuffersLimit = 16;

    private readonly List<float[]> _idle = [];
    private readonly Lock _gate = new();
    private readonly long _retainedBytesLimit;
    private long _idleBytes;

    public PinnedBuffers(long retainedBytesLimit = DefaultRetainedBytes)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(retainedBytesLimit);
        _retainedBytesLimit = retainedBytesLimit;
    }

    /// <summary>The process's buffers, used by every panel unless a test gives its own.</summary>
    public static PinnedBuffers Shared { get; } = new();

    /// <summary>Bytes held by idle buffers now.</summary>
    public long IdleBytes
    {
        get
        {
            lock (_gate)
            {
                return _idleBytes;
            }
        }
    }

    /// <summary>
    /// A pinned buffer of at least <paramref name="length"/> floats: the smallest idle one that is large enough
    /// and not more than twice as large, else a new one. Its contents are undefined.
    /// </summary>
    public float[] Rent(int length)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(length);
        lock (_gate)
        {
            int best = -1;
            for (int i = 0; i < _idle.Count; i++)
            {
                int candidate = _idle[i].Length;
                if (candidate >= length && candidate / 2 <= length && (best < 0 || candidate < _idle[best].Length))
                {
                    best = i;
                }
            }

            if (best >= 0)
            {
                float[] buffer = _idle[best];
                _idle.RemoveAt(best);
                _idleBytes -= (long)buffer.Length * sizeof(float);
                return buffer;
            }
        }

        return GC.AllocateUninitializedArray<float>(length, pinned: true);
    }

    /// <summary>Gives a buffer back for reuse; the caller must not touch it afterwards.</summary>
    public void Return(float[] buffer)
    {
        ArgumentNullException.ThrowIfNull(buffer);
        long bytes = (long)buffer.Length * sizeof(float);
        lock (_gate)
        {
            // Make room by dropping the smallest idle buffers: large panels are the ones worth keeping.
            while (_idle.Count > 0 && (_idleBytes + bytes > _retainedBytesLimit || _idle.Count >= RetainedBuffersLimit))
            {
                int smallest = 0;
                for (int i = 1; i < _idle.Count; i++)
                {
                    if (_idle[i].Length < _idle[smallest].Length)
                    {
                        smallest = i;
                    }
                }

                if (_idle[smallest].Length > buffer.Length)
                {
                    return;   // everything kept is larger than this one: keep those
                }

                _idleBytes -= (long)_idle[smallest].Length * sizeof(float);
                _idle.RemoveAt(smallest);
            }

            if (bytes <= _retainedBytesLimit)
            {
                _idle.Add(buffer);
                _idleBytes += bytes;
            }
        }
    }
}
