using TopicGroups.Cli.Input;

namespace TopicGroups.Cli.Tests.Input;

// The header is a Python dictionary literal with keys 'descr', 'fortran_order' and 'shape'
// (NEP 1 / numpy.lib.format, "Format Version 1.0").
public sealed class NpyHeaderTests
{
    [Fact]
    public void Parse_HeaderAsNumpyWritesIt_ReadsDescrOrderAndShape()
    {
        // The exact text numpy 1.24.2 wrote for a (2, 3) float32 array (see NumpyFixtures).
        NpyHeader header = NpyHeader.Parse("{'descr': '<f4', 'fortran_order': False, 'shape': (2, 3), }");

        Assert.Equal("<f4", header.Descr);
        Assert.False(header.FortranOrder);
        Assert.Equal([2L, 3L], header.Shape);
    }

    [Fact]
    public void Parse_KeysInAnyOrderDoubleQuotesNoTrailingComma_SameHeader()
    {
        // The spec asks readers to accept any valid dictionary literal, not one key order.
        NpyHeader header = NpyHeader.Parse("{\"shape\": (612, 384), \"fortran_order\": True, \"descr\": \"<f8\"}");

        Assert.Equal("<f8", header.Descr);
        Assert.True(header.FortranOrder);
        Assert.Equal([612L, 384L], header.Shape);
    }

    [Theory]
    [InlineData("(3,)", new long[] { 3 })]
    [InlineData("()", new long[0])]
    [InlineData("(2L, 3L)", new long[] { 2, 3 })] // Python 2 wrote long integers with an L suffix.
    [InlineData("( 4 , 5 , 6 )", new long[] { 4, 5, 6 })]
    public void Parse_ShapeForms_ReadsEveryDimension(string shape, long[] expected)
    {
        NpyHeader header = NpyHeader.Parse($"{{'descr': '<f4', 'fortran_order': False, 'shape': {shape}, }}");

        Assert.Equal(expected, header.Shape);
    }

    [Theory]
    [InlineData("{'descr': '<f4', 'fortran_order': False}", "'shape'")]
    [InlineData("{'descr': '<f4', 'shape': (1, 2)}", "'fortran_order'")]
    [InlineData("{'descr': '<f4', 'fortran_order': maybe, 'shape': (1, 2)}", "True or False")]
    [InlineData("{'descr': '<f4', 'fortran_order': False, 'shape': (1, x)}", "whole number")]
    [InlineData("['descr', '<f4']", "expected '{'")]
    public void Parse_Damaged_FormatExceptionSaysWhat(string text, string expectedFragment)
    {
        var ex = Assert.Throws<FormatException>(() => NpyHeader.Parse(text));

        Assert.Contains(expectedFragment, ex.Message);
    }

    [Fact]
    public void Format_Float32Matrix_SameTextAsNumpy()
    {
        var header = new NpyHeader("<f4", FortranOrder: false, [2, 3]);

        Assert.Equal("{'descr': '<f4', 'fortran_order': False, 'shape': (2, 3), }", header.Format());
    }
}
