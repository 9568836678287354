using System.Buffers;
using System.Collections.Concurrent;
using Microsoft.AspNetCore.Connections;

namespace TopicGroups.Server;

/// <summary>
/// Kestrel's connection buffers in blocks of <see cref="BlockBytes"/> instead of its default 4 KiB. The socket
/// transport receives into the free part of the current block, so with 4 KiB blocks an uploaded batch arrives about
/// 2 KiB per receive call: about 80,000 calls for 100,000 × 384 float32 (154 MB), a third of the upload's CPU time
/// on a 2-core VM (169,000 receive calls for a run of the bench, 22,000 with 64 KiB blocks; docs/performance.md).
/// With 64 KiB blocks a call takes up to 64 KiB. Blocks are pinned arrays, reused; at most <see cref="MaxKeptBlocks"/>
/// idle ones are kept per pool. The cost: a connection's buffers grow in 64 KiB steps.
/// </summary>
/// <remarks>Public, unlike most of the server, so that the server tests (which see only public types) can check it.</remarks>
public sealed class ReceiveBlockPoolFactory : IMemoryPoolFactory<byte>
{
    public const int BlockBytes = 64 * 1024;

    /// <summary>Idle blocks kept per pool (4 MiB): about the HTTP/2 stream window in flight; more are let go.</summary>
    public const int MaxKeptBlocks = 64;

    public MemoryPool<byte> Create(MemoryPoolOptions? options = null) => new ReceiveBlockPool();

    private sealed class ReceiveBlockPool : MemoryPool<byte>
    {
        private readonly ConcurrentQueue<Block> _idle = new();
        private int _idleCount;
        private bool _disposed;

        public override int MaxBufferSize => BlockBytes;

        public override IMemoryOwner<byte> Rent(int minBufferSize = -1)
        {
            ArgumentOutOfRangeException.ThrowIfGreaterThan(minBufferSize, BlockBytes);
            if (_idle.TryDequeue(out Block? block))
            {
                Interlocked.Decrement(ref _idleCount);
                block.Lend();
                return block;
            }

            return new Block(this);
        }

        protected override void Dispose(bool disposing)
        {
            _disposed = true;
            while (_idle.TryDequeue(out _))
            {
            }
        }

        private void Return(Block block)
        {
            if (!_disposed && Interlocked.Increment(ref _idleCount) <= MaxKeptBlocks)
            {
                _idle.Enqueue(block);
                return;
            }

            Interlocked.Decrement(ref _idleCount);
        }

        private sealed class Block(ReceiveBlockPool pool) : IMemoryOwner<byte>
        {
            private readonly byte[] _array = GC.AllocateUninitializedArray<byte>(BlockBytes, pinned: true);
            private int _lent = 1;

            public Memory<byte> Memory => _array;

            public void Lend() => _lent = 1;

            public void Dispose()
            {
                if (Interlocked.Exchange(ref _lent, 0) == 1)
                {
                    pool.Return(this);
                }
            }
        }
    }
}
