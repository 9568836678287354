using System.Collections.Concurrent;
using TopicGroups.Server.Validation;
using Xunit;

namespace TopicGroups.Server.Tests.Validation;

/// <summary>The pool that lends batch arrays: one holder per array, a byte cap, and no array lent twice.</summary>
public sealed class BatchArrayPoolTests
{
    private const int Values = BatchArrayPool.MinKeptValues;
    private const long Bytes = Values * sizeof(float);

    [Fact]
    public void Rent_AfterReturn_LendsTheSameArrayToABatchOfTheSameOrSmallerSize()
    {
        var pool = new BatchArrayPool(maxKeptBytes: 4 * Bytes);
        float[] first = pool.Rent(Values + 100);
        pool.Return(first);

        float[] second = pool.Rent(Values);

        Assert.Same(first, second);
        Assert.Equal(0, pool.KeptCount);
    }

    [Fact]
    public void Rent_TwiceWithoutReturn_GivesDifferentArrays()
    {
        var pool = new BatchArrayPool(maxKeptBytes: 4 * Bytes);
        pool.Return(new float[Values]);

        float[] first = pool.Rent(Values);
        float[] second = pool.Rent(Values);

        Assert.NotSame(first, second);
        Assert.Equal(Values, second.Length);
    }

    [Fact]
    public void Rent_KeptArraysOverTwiceTheNeed_LendsANewArrayAndLetsTheOldestKeptOneGo()
    {
        var pool = new BatchArrayPool(maxKeptBytes: 8 * Bytes);
        float[] older = new float[3 * Values];
        float[] newer = new float[3 * Values];
        pool.Return(older);
        pool.Return(newer);

        float[] lent = pool.Rent(Values);

        Assert.NotSame(older, lent);
        Assert.NotSame(newer, lent);
        Assert.Equal(Values, lent.Length);
        Assert.Equal((1, 3 * Bytes), (pool.KeptCount, pool.KeptBytes));   // the new array's bytes were let go first
        Assert.Same(newer, pool.Rent(2 * Values));
    }

    [Fact]
    public void Rent_NoKeptArrayFits_LetsGoOfKeptArraysOfAtLeastTheNewSize()
    {
        var pool = new BatchArrayPool(maxKeptBytes: 8 * Bytes);
        pool.Return(new float[Values]);
        pool.Return(new float[Values]);
        pool.Return(new float[Values]);

        float[] lent = pool.Rent(Values + 1);   // fits none: the two oldest kept arrays go (one alone is too few bytes)

        Assert.Equal(Values + 1, lent.Length);
        Assert.Equal(1, pool.KeptCount);
        pool.Rent(5 * Values);
        Assert.Equal(0, pool.KeptCount);
    }

    [Fact]
    public void Rent_SeveralKept_LendsTheSmallestThatFits()
    {
        var pool = new BatchArrayPool(maxKeptBytes: 8 * Bytes);
        float[] larger = new float[Values + 500];
        float[] smaller = new float[Values + 200];
        float[] tooSmall = new float[Values + 50];
        pool.Return(larger);
        pool.Return(smaller);
        pool.Return(tooSmall);

        Assert.Same(smaller, pool.Rent(Values + 100));
    }

    [Fact]
    public void Return_OverTheCap_DropsTheOldestKeptArrays()
    {
        var pool = new BatchArrayPool(maxKeptBytes: 2 * Bytes);
        float[] oldest = new float[Values];
        float[] middle = new float[Values];
        float[] newest = new float[Values];
        pool.Return(oldest);
        pool.Return(middle);
        pool.Return(newest);

        Assert.Equal(2, pool.KeptCount);
        Assert.Equal(2 * Bytes, pool.KeptBytes);
        var lent = new[] { pool.Rent(Values), pool.Rent(Values) };
        Assert.Contains(middle, lent);
        Assert.Contains(newest, lent);
    }

    [Theory]
    [InlineData(0L)]                // keeps nothing
    [InlineData(Bytes - 1)]         // the array alone is over the cap
    public void Return_ArrayOverTheCap_IsNotKept(long maxKeptBytes)
    {
        var pool = new BatchArrayPool(maxKeptBytes);
        pool.Return(new float[Values]);

        Assert.Equal(0, pool.KeptCount);
        Assert.Equal(0, pool.KeptBytes);
    }

    [Fact]
    public void Return_SmallArray_IsNotKept()
    {
        var pool = new BatchArrayPool(maxKeptBytes: 4 * Bytes);
        pool.Return(new float[Values - 1]);

        Assert.Equal(0, pool.KeptCount);
    }

    [Fact]
    public void Return_SameArrayTwice_ThrowsSoThatTwoBatchesCannotShareIt()
    {
        var pool = new BatchArrayPool(maxKeptBytes: 4 * Bytes);
        float[] array = pool.Rent(Values);
        pool.Return(array);

        var error = Assert.Throws<InvalidOperationException>(() => pool.Return(array));

        Assert.Contains("returned twice", error.Message);
        Assert.Equal(1, pool.KeptCount);
    }

    [Fact]
    public void Constructor_NegativeCap_Throws() =>
        Assert.Throws<ArgumentOutOfRangeException>(() => new BatchArrayPool(maxKeptBytes: -1));

    /// <summary>
    /// Four threads rent and return arrays of three sizes as fast as they can; every lent array is marked as held
    /// and must not already be held by another thread.
    /// </summary>
    [Fact]
    public async Task RentAndReturn_FromSeveralThreads_NeverLendAnArrayThatIsHeld()
    {
        var pool = new BatchArrayPool(maxKeptBytes: 6 * Bytes);
        var held = new ConcurrentDictionary<float[], int>(ReferenceEqualityComparer.Instance);
        int sharedLends = 0;
        int reused = 0;
        var seen = new ConcurrentDictionary<float[], int>(ReferenceEqualityComparer.Instance);
        int[] sizes = [Values, Values + Values / 4, Values + Values / 2];

        await Task.WhenAll(Enumerable.Range(0, 4).Select(worker => Task.Run(() =>
        {
            var random = new Random(worker);
            for (int round = 0; round < 500; round++)
            {
                float[] array = pool.Rent(sizes[random.Next(sizes.Length)]);
                if (!held.TryAdd(array, worker))
                {
                    Interlocked.Increment(ref sharedLends);
                }

                if (!seen.TryAdd(array, 0))
                {
                    Interlocked.Increment(ref reused);
                }

                array[0] = worker;
                array[^1] = worker;
                Thread.SpinWait(random.Next(50));
                if (array[0] != worker || array[^1] != worker)
                {
                    Interlocked.Increment(ref sharedLends);
                }

                held.TryRemove(array, out _);
                pool.Return(array);
            }
        })));

        Assert.Equal(0, sharedLends);
        Assert.True(reused > 0, "the pool never lent a returned array");
        Assert.True(pool.KeptBytes <= 6 * Bytes);
    }
}
