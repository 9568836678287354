using System.Buffers;
using Microsoft.AspNetCore.Connections;
using Xunit;

namespace TopicGroups.Server.Tests.Operations;

/// <summary>Kestrel's connection buffers: 64 KiB blocks, reused once given back, each lent to one holder at a time.</summary>
public sealed class ReceiveBlockPoolFactoryTests
{
    private static MemoryPool<byte> NewPool() => new ReceiveBlockPoolFactory().Create(new MemoryPoolOptions());

    [Fact]
    public void Rent_AnySizeUpToTheBlock_Gives64KiB()
    {
        using MemoryPool<byte> pool = NewPool();

        Assert.Equal(ReceiveBlockPoolFactory.BlockBytes, pool.MaxBufferSize);
        using IMemoryOwner<byte> small = pool.Rent(1);
        using IMemoryOwner<byte> unspecified = pool.Rent();
        using IMemoryOwner<byte> whole = pool.Rent(ReceiveBlockPoolFactory.BlockBytes);
        Assert.All(new[] { small, unspecified, whole }, block => Assert.Equal(64 * 1024, block.Memory.Length));
    }

    [Fact]
    public void Rent_MoreThanABlock_Throws()
    {
        using MemoryPool<byte> pool = NewPool();

        Assert.Throws<ArgumentOutOfRangeException>(() => pool.Rent(ReceiveBlockPoolFactory.BlockBytes + 1));
    }

    [Fact]
    public void Rent_AfterDispose_ReusesTheBlock_AndADoubleDisposeDoesNotLendItTwice()
    {
        using MemoryPool<byte> pool = NewPool();
        IMemoryOwner<byte> first = pool.Rent();
        first.Memory.Span[0] = 42;
        first.Dispose();
        first.Dispose();   // a second Dispose must not put the block in the pool twice

        IMemoryOwner<byte> again = pool.Rent();
        IMemoryOwner<byte> other = pool.Rent();

        Assert.Same(first, again);
        Assert.NotSame(again, other);
        Assert.False(again.Memory.Span.Overlaps(other.Memory.Span));
    }

    [Fact]
    public void Dispose_ManyBlocks_KeepsAtMostMaxKeptBlocks()
    {
        using MemoryPool<byte> pool = NewPool();
        int count = ReceiveBlockPoolFactory.MaxKeptBlocks + 10;
        List<IMemoryOwner<byte>> lent = Enumerable.Range(0, count).Select(_ => pool.Rent()).ToList();
        lent.ForEach(block => block.Dispose());

        var reused = new HashSet<IMemoryOwner<byte>>(ReferenceEqualityComparer.Instance);
        for (int i = 0; i < count; i++)
        {
            IMemoryOwner<byte> block = pool.Rent();
            if (lent.Contains(block))
            {
                reused.Add(block);
            }
        }

        Assert.Equal(ReceiveBlockPoolFactory.MaxKeptBlocks, reused.Count);
    }
}
