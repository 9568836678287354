using System.Buffers.Binary;
using System.Runtime.InteropServices;
using System.Text;

namespace TopicGroups.Cli.Input;

/// <summary>
/// Writes a float32 matrix as a .npy file, NPY format version 1.0 (NEP 1 / numpy.lib.format):
/// descr '&lt;f4', C order, shape (rows, columns), header padded with spaces and ended by '\n'
/// so the data starts at a multiple of 64 bytes — the same bytes numpy.save writes.
/// </summary>
internal static class NpyWriter
{
    public static void Write(string path, ReadOnlySpan<float> values, int rows, int columns)
    {
        using var stream = new FileStream(path, FileMode.Create, FileAccess.Write, FileShare.None, bufferSize: 1 << 16);
        Write(stream, values, rows, columns);
    }

    public static void Write(Stream stream, ReadOnlySpan<float> values, int rows, int columns)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(rows);
        ArgumentOutOfRangeException.ThrowIfNegative(columns);
        if (values.Length != (long)rows * columns)
        {
            throw new ArgumentException($"values has {values.Length} entries; shape ({rows}, {columns}) needs {(long)rows * columns}", nameof(values));
        }

        var header = new NpyHeader("<f4", FortranOrder: false, [rows, columns]);
        string text = header.Format();
        const int prefixLength = 10; // magic (6) + version (2) + uint16 header length (2)
        int unpadded = prefixLength + text.Length + 1;
        int padded = (unpadded + NpyHeader.Alignment - 1) / NpyHeader.Alignment * NpyHeader.Alignment;
        string headerText = text + new string(' ', padded - unpadded) + "\n";

        Span<byte> prefix = stackalloc byte[prefixLength];
        NpyHeader.Magic.CopyTo(prefix);
        prefix[6] = 1;
        prefix[7] = 0;
        BinaryPrimitives.WriteUInt16LittleEndian(prefix[8..], checked((ushort)headerText.Length));
        stream.Write(prefix);
        stream.Write(Encoding.ASCII.GetBytes(headerText));

        if (BitConverter.IsLittleEndian)
        {
            stream.Write(MemoryMarshal.AsBytes(values));
        }
        else
        {
            Span<byte> item = stackalloc byte[sizeof(float)];
            foreach (float value in values)
            {
                BinaryPrimitives.WriteSingleLittleEndian(item, value);
                stream.Write(item);
            }
        }
    }
}
