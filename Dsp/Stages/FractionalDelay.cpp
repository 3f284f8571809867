#include "FractionalDelay.h"

#include <algorithm>
#include <cmath>

namespace kerf::dsp
{

void lagrangeTaps(double delaySamples, int order, double* taps) noexcept
{
    // Laakso et al. 1996, eq. 42: h(n) = prod_{k=0, k != n}^{N} (D - k)/(n - k).
    const int n = std::clamp(order, 1, kMaxLagrangeOrder);
    for (int k = 0; k <= n; ++k)
    {
        double h = 1.0;
        for (int i = 0; i <= n; ++i)
            if (i != k)
                h *= (delaySamples - i) / static_cast<double>(k - i);
        taps[k] = h;
    }
}

void lagrangeTapDerivatives(double delaySamples, int order, double* dtaps) noexcept
{
    // Product rule on eq. 42: d/dD prod_i (D - i)/(k - i) = sum_m [1/(k - m)] prod_{i != m}.
    const int n = std::clamp(order, 1, kMaxLagrangeOrder);
    for (int k = 0; k <= n; ++k)
    {
        double sum = 0.0;
        for (int m = 0; m <= n; ++m)
        {
            if (m == k)
                continue;
            double p = 1.0 / static_cast<double>(k - m);
            for (int i = 0; i <= n; ++i)
                if (i != k && i != m)
                    p *= (delaySamples - i) / static_cast<double>(k - i);
            sum += p;
        }
        dtaps[k] = sum;
    }
}

void thiranCoefficients(double delaySamples, int order, double* a) noexcept
{
    // Laakso et al. 1996, eq. 86 (J.-P. Thiran, 1971).
    const int n = std::clamp(order, 1, kMaxThiranOrder);
    const double d = delaySamples;
    double binom = 1.0;
    for (int k = 0; k <= n; ++k)
    {
        if (k > 0)
            binom = binom * (n - k + 1) / k;
        double p = 1.0;
        for (int i = 0; i <= n; ++i)
            p *= (d - n + i) / (d - n + k + i);
        a[k] = ((k % 2) ? -1.0 : 1.0) * binom * p;
    }
    a[0] = 1.0; // by definition; the product is 0/0 when D = N exactly
}

double minimumDelaySamples(DelayInterpolation kind, int order, int minWholeSamples) noexcept
{
    // Thiran: stay at or above N - 1/2 (stable for D > N - 1, Laakso et al. 1996).
    return kind == DelayInterpolation::thiran ? minWholeSamples + order - 0.5
                                              : static_cast<double>(minWholeSamples);
}

DelaySplit splitDelay(double delaySamples, DelayInterpolation kind, int order,
                      int minWholeSamples) noexcept
{
    DelaySplit s;
    if (kind == DelayInterpolation::thiran)
    {
        const int n = std::clamp(order, 1, kMaxThiranOrder);
        const int whole = static_cast<int>(std::floor(delaySamples - (n - 0.5)));
        s.wholeSamples = std::max(minWholeSamples, whole);
        s.interpolatorSamples = std::max(n - 0.5, delaySamples - s.wholeSamples);
    }
    else
    {
        const int n = std::clamp(order, 1, kMaxLagrangeOrder);
        const int whole = static_cast<int>(std::floor(delaySamples - 0.5 * (n - 1)));
        s.wholeSamples = std::max(minWholeSamples, whole);
        s.interpolatorSamples = std::max(0.0, delaySamples - s.wholeSamples);
    }
    return s;
}

double ResponseValue::groupDelaySamples() const noexcept
{
    // tau = -d arg H / d omega = -Im(H'/H).
    if (std::abs(h) == 0.0)
        return 0.0;
    return -(dh / h).imag();
}

ResponseValue operator+(const ResponseValue& a, const ResponseValue& b) noexcept
{
    return {a.h + b.h, a.dh + b.dh};
}
ResponseValue operator-(const ResponseValue& a, const ResponseValue& b) noexcept
{
    return {a.h - b.h, a.dh - b.dh};
}
ResponseValue operator*(const ResponseValue& a, const ResponseValue& b) noexcept
{
    return {a.h * b.h, a.dh * b.h + a.h * b.dh};
}
ResponseValue operator/(const ResponseValue& a, const ResponseValue& b) noexcept
{
    return {a.h / b.h, (a.dh * b.h - a.h * b.dh) / (b.h * b.h)};
}
ResponseValue operator*(double s, const ResponseValue& a) noexcept
{
    return {s * a.h, s * a.dh};
}

ResponseValue responseConstant(std::complex<double> value) noexcept
{
    return {value, {0.0, 0.0}};
}

ResponseValue firResponse(const double* c, int count, double offset, double omega) noexcept
{
    const std::complex<double> j(0.0, 1.0);
    ResponseValue r{{0.0, 0.0}, {0.0, 0.0}};
    for (int k = 0; k < count; ++k)
    {
        const double t = offset + k;
        const std::complex<double> e = std::polar(c[k], -omega * t);
        r.h += e;
        r.dh += -j * t * e;
    }
    return r;
}

ResponseValue fractionalDelayResponse(double delaySamples, DelayInterpolation kind, int order,
                                      int minWholeSamples, double omega) noexcept
{
    const DelaySplit s = splitDelay(delaySamples, kind, order, minWholeSamples);
    if (kind == DelayInterpolation::thiran)
    {
        const int n = std::clamp(order, 1, kMaxThiranOrder);
        double a[kMaxThiranOrder + 1];
        double b[kMaxThiranOrder + 1];
        thiranCoefficients(s.interpolatorSamples, n, a);
        for (int k = 0; k <= n; ++k)
            b[k] = a[n - k]; // numerator z^-N A(1/z)
        return firResponse(b, n + 1, s.wholeSamples, omega) / firResponse(a, n + 1, 0.0, omega);
    }
    const int n = std::clamp(order, 1, kMaxLagrangeOrder);
    double h[kMaxLagrangeOrder + 1];
    lagrangeTaps(s.interpolatorSamples, n, h);
    return firResponse(h, n + 1, s.wholeSamples, omega);
}

} // namespace kerf::dsp
